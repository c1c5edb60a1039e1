-- Outcome reports: what a dataset's published lists turned out to be
-- (realized accuracy, campaign effect, drift, cohort retention), one JSON
-- document per measurement, written by internal/analysis's measure job and
-- read by the overview and outcomes pages.
CREATE TABLE outcome_reports (
    id          INTEGER PRIMARY KEY,
    dataset_id  INTEGER NOT NULL REFERENCES datasets(id) ON DELETE CASCADE,
    version_id  INTEGER NOT NULL REFERENCES versions(id) ON DELETE CASCADE,
    report      TEXT NOT NULL,
    created_at  TEXT NOT NULL
);
CREATE INDEX outcome_reports_by_dataset ON outcome_reports (dataset_id, id DESC);

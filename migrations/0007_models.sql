-- Training runs and the models they produced.

-- One training run: the churn definition and dataset version it used, its
-- options, and its whole report (metrics with intervals, list figures per
-- test date, stage timings) as one document.
CREATE TABLE training_runs (
    id                 INTEGER PRIMARY KEY,
    dataset_id         INTEGER NOT NULL REFERENCES datasets(id) ON DELETE CASCADE,
    version_id         INTEGER NOT NULL REFERENCES versions(id) ON DELETE CASCADE,
    definition_id      INTEGER NOT NULL REFERENCES churn_definitions(id),
    options            TEXT NOT NULL,
    report             TEXT NOT NULL,
    created_by         TEXT NOT NULL,
    created_at         TEXT NOT NULL
);

-- A model as offered for lists: refit on all labelled snapshots and saved
-- whole (parameters, features, standardizer, calibration), so reloading it
-- gives identical predictions. At most one model of a dataset is in use.
CREATE TABLE models (
    id          INTEGER PRIMARY KEY,
    run_id      INTEGER NOT NULL REFERENCES training_runs(id) ON DELETE CASCADE,
    dataset_id  INTEGER NOT NULL REFERENCES datasets(id) ON DELETE CASCADE,
    name        TEXT NOT NULL,
    kind        TEXT NOT NULL,
    model       TEXT NOT NULL,
    summary     TEXT NOT NULL,   -- headline test metrics, JSON
    in_use      INTEGER NOT NULL DEFAULT 0,
    created_at  TEXT NOT NULL
);
CREATE INDEX models_by_dataset ON models (dataset_id, id DESC);
CREATE UNIQUE INDEX models_in_use ON models (dataset_id) WHERE in_use = 1;

-- At-risk lists and their weekly schedule.

-- One list: a scoring of every active customer of a dataset as of one day
-- with one model. A list is a draft until an analyst publishes it; a
-- published list never changes (store refuses updates to it). summary is a
-- JSON document with the rule, bands, holdout, counts and the figures shown
-- before publishing.
CREATE TABLE lists (
    id            INTEGER PRIMARY KEY AUTOINCREMENT, -- never reused: pages keep what a list id showed
    dataset_id    INTEGER NOT NULL REFERENCES datasets(id) ON DELETE CASCADE,
    version_id    INTEGER NOT NULL REFERENCES versions(id) ON DELETE CASCADE,
    model_id      INTEGER NOT NULL REFERENCES models(id) ON DELETE CASCADE,
    as_of         TEXT NOT NULL,                 -- YYYY-MM-DD
    data_through  TEXT NOT NULL,                 -- the dataset's data_through when scored
    state         TEXT NOT NULL CHECK (state IN ('draft', 'published')),
    summary       TEXT NOT NULL,
    created_by    TEXT NOT NULL,
    created_at    TEXT NOT NULL,
    published_by  TEXT,
    published_at  TEXT
);
CREATE INDEX lists_by_dataset ON lists (dataset_id, id DESC);

-- Every scored customer of a list, in rank order (1 = highest risk; ties
-- broken by a keyed hash, never by input order). status: 0 scored and not
-- selected, 1 selected and to be contacted, 2 selected but withheld as
-- holdout, 3 not contactable (never exported for contact). band: 0 low,
-- 1 medium, 2 high. reasons: plain-language sentences joined by "; ".
CREATE TABLE list_rows (
    list_id      INTEGER NOT NULL REFERENCES lists(id) ON DELETE CASCADE,
    rank         INTEGER NOT NULL,
    customer_id  INTEGER NOT NULL,
    probability  REAL NOT NULL,
    band         INTEGER NOT NULL,
    status       INTEGER NOT NULL,
    reasons      TEXT NOT NULL,
    PRIMARY KEY (list_id, rank)
) WITHOUT ROWID;

-- A dataset's weekly list run: weekday (0 Sunday … 6 Saturday) and time
-- of day (HH:MM, server time zone UTC), the list's rule as JSON, and
-- whether the run publishes at once or leaves a draft. last_run_at is the
-- scheduled slot last handled (run, skipped or failed), so a slot missed
-- while the server was down is run once at the next start.
CREATE TABLE schedules (
    dataset_id   INTEGER PRIMARY KEY REFERENCES datasets(id) ON DELETE CASCADE,
    weekday      INTEGER NOT NULL CHECK (weekday BETWEEN 0 AND 6),
    at           TEXT NOT NULL,
    publish      INTEGER NOT NULL DEFAULT 0,
    rule         TEXT NOT NULL,
    enabled      INTEGER NOT NULL DEFAULT 1,
    created_by   TEXT NOT NULL,
    created_at   TEXT NOT NULL,
    last_run_at  TEXT,
    last_note    TEXT
);

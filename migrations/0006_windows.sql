-- Churn-window derivations and the churn definitions analysts save.

-- One derivation: what it read (version, data_through), how (options) and
-- everything it found, as one JSON document (methods, second-order
-- windows, chart figures and the sensitivity table for X = 1…365), so any
-- X an analyst types is a lookup, never a recomputation.
CREATE TABLE window_runs (
    id            INTEGER PRIMARY KEY,
    dataset_id    INTEGER NOT NULL REFERENCES datasets(id) ON DELETE CASCADE,
    version_id    INTEGER NOT NULL REFERENCES versions(id) ON DELETE CASCADE,
    data_through  TEXT NOT NULL,
    options       TEXT NOT NULL,
    report        TEXT NOT NULL,
    created_by    TEXT NOT NULL,
    created_at    TEXT NOT NULL
);
CREATE INDEX window_runs_by_dataset ON window_runs (dataset_id, id DESC);

-- A churn definition: X and H with the reasons for them. Each save is a new
-- definition version of its dataset; the newest is the current one, and
-- later analyses record which they used.
CREATE TABLE churn_definitions (
    id             INTEGER PRIMARY KEY,
    dataset_id     INTEGER NOT NULL REFERENCES datasets(id) ON DELETE CASCADE,
    seq            INTEGER NOT NULL,
    window_days    INTEGER NOT NULL CHECK (window_days BETWEEN 1 AND 3650),
    horizon_days   INTEGER NOT NULL CHECK (horizon_days BETWEEN 1 AND 3650),
    method         TEXT NOT NULL,
    percentile     REAL NOT NULL,
    lookback_days  INTEGER NOT NULL,
    derived_days   INTEGER,          -- what the method gave, when the analyst rounded it
    run_id         INTEGER REFERENCES window_runs(id) ON DELETE SET NULL,
    version_id     INTEGER NOT NULL, -- the dataset version it was derived on
    rationale      TEXT NOT NULL,
    created_by     TEXT NOT NULL,
    created_at     TEXT NOT NULL,
    UNIQUE (dataset_id, seq)
);

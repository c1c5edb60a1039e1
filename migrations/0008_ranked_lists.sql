-- Each model's test-period ranking per snapshot date, stored compactly so
-- that any list size, threshold or expected-value question is a lookup,
-- not a new evaluation: data holds, in list order (score descending, ties
-- by a keyed hash of the customer), one float32 score and one label byte
-- per customer.
CREATE TABLE ranked_lists (
    run_id     INTEGER NOT NULL REFERENCES training_runs(id) ON DELETE CASCADE,
    model      TEXT NOT NULL,
    day        TEXT NOT NULL,
    customers  INTEGER NOT NULL,
    positives  INTEGER NOT NULL,
    data       BLOB NOT NULL,
    PRIMARY KEY (run_id, model, day)
) WITHOUT ROWID;

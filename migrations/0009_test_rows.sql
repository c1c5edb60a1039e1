-- The evaluated test rows of each training run as RFC 4180 CSV
-- (customer_id,snapshot_date,label, then one score column per model), so
-- the models page can offer them for audit in any tool.
CREATE TABLE run_test_rows (
    run_id  INTEGER PRIMARY KEY REFERENCES training_runs(id) ON DELETE CASCADE,
    csv     BLOB NOT NULL
);

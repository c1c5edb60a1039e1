-- Jobs: long computations (an import of a large file, window derivation,
-- training, scoring) with their status, progress and result, kept as
-- history after they finish. Written and read only by internal/store/jobs.go
-- on behalf of internal/jobs.
--
-- dataset_id and rerun_of have no foreign key on purpose: a dataset can be
-- deleted, and old jobs pruned, while the jobs that name them stay as
-- history. Times are RFC 3339 UTC text, NULL until they happen. params and
-- result are small JSON documents stored as text, so they read as they are
-- in the sqlite3 shell; NULL when there is none.
CREATE TABLE jobs (
    id           INTEGER PRIMARY KEY,
    kind         TEXT NOT NULL CHECK (kind <> ''),
    dataset_id   INTEGER,          -- NULL when the job concerns no dataset
    params       TEXT,
    status       TEXT NOT NULL CHECK (status IN
                     ('queued', 'running', 'done', 'failed', 'cancelled', 'interrupted')),
    -- Written when the status changes and every few seconds while running;
    -- the live value is in the memory of the process that runs the job.
    progress     REAL NOT NULL DEFAULT 0 CHECK (progress BETWEEN 0 AND 100),
    message      TEXT NOT NULL DEFAULT '',
    error        TEXT NOT NULL DEFAULT '',  -- safe to show users
    result       TEXT,
    created_by   TEXT NOT NULL DEFAULT '',
    created_at   TEXT NOT NULL,
    started_at   TEXT,
    finished_at  TEXT,
    rerun_of     INTEGER           -- the job this one re-runs
);

-- Pages list a dataset's jobs newest first. Listing all jobs newest first
-- walks the primary key backwards and needs no index. Marking leftovers
-- interrupted at start-up scans the table once, which is cheap at the
-- thousands of rows a jobs table holds, so status has no index to maintain.
CREATE INDEX jobs_by_dataset ON jobs (dataset_id, id DESC);

-- Datasets, their versions, customers and orders.
--
-- Order days are stored as integers (days since 1970-01-01 in the dataset's
-- time zone) rather than YYYY-MM-DD text: the orders table is the one large
-- table, and integers keep it about a quarter smaller and its reads faster.
-- Every other date is YYYY-MM-DD text and every time RFC 3339 UTC text.

CREATE TABLE datasets (
    id            INTEGER PRIMARY KEY,
    name          TEXT NOT NULL UNIQUE,
    timezone      TEXT NOT NULL DEFAULT 'UTC',
    data_through  TEXT,            -- analyst's choice; NULL = the latest order date
    salt          BLOB NOT NULL,   -- random; keys the holdout and tie-break hashes
    created_at    TEXT NOT NULL
);

-- A version is one import or append. It is 'loading' while its rows are
-- written in chunks and becomes 'ready' in one small final transaction;
-- readers only ever see ready versions, and loading ones are purged at
-- start-up.
CREATE TABLE versions (
    id               INTEGER PRIMARY KEY,
    dataset_id       INTEGER NOT NULL REFERENCES datasets(id) ON DELETE CASCADE,
    seq              INTEGER NOT NULL,
    state            TEXT NOT NULL CHECK (state IN ('loading', 'ready')),
    kind             TEXT NOT NULL CHECK (kind IN ('import', 'append')),
    source           TEXT NOT NULL,
    rows_read        INTEGER NOT NULL DEFAULT 0,
    orders_added     INTEGER NOT NULL DEFAULT 0,
    customers_added  INTEGER NOT NULL DEFAULT 0,
    rows_skipped     INTEGER NOT NULL DEFAULT 0,
    repeats_skipped  INTEGER NOT NULL DEFAULT 0,
    customers_file   TEXT,
    customers_read   INTEGER NOT NULL DEFAULT 0,
    -- whole-dataset figures as of this version
    orders_total     INTEGER NOT NULL DEFAULT 0,
    customers_total  INTEGER NOT NULL DEFAULT 0,
    first_day        INTEGER,
    last_day         INTEGER,
    created_at       TEXT NOT NULL,
    finished_at      TEXT,
    UNIQUE (dataset_id, seq)
);

-- Customers have dense ids 0..n-1 within their dataset, assigned at first
-- sight, so analyses can index arrays by them. WITHOUT ROWID: the primary
-- key is the table, so an insert updates one b-tree less. There is
-- deliberately no index on key: inserting 200k random keys into one took
-- 14 µs a row, longer than the whole rest of an import; keys are unique
-- because ingest.Keys assigns ids, and lookups by key go through the key
-- map every import and analysis loads anyway.
CREATE TABLE customers (
    dataset_id   INTEGER NOT NULL REFERENCES datasets(id) ON DELETE CASCADE,
    id           INTEGER NOT NULL,
    key          TEXT NOT NULL,
    version_id   INTEGER NOT NULL REFERENCES versions(id) ON DELETE CASCADE,
    email        TEXT,
    signup_date  TEXT,
    contactable  INTEGER NOT NULL DEFAULT 1,
    attributes   TEXT,             -- JSON object of attribute name → value
    PRIMARY KEY (dataset_id, id)
) WITHOUT ROWID;

-- An order's id carries its version: id = version_id * 2^32 + n, with n
-- counting the version's orders from 0. A version's orders are then one
-- contiguous rowid range, written in ascending order (b-tree appends, no
-- secondary index to maintain) and read or deleted by a range scan. There
-- is no foreign-key clause for the same reason; store deletes a version's
-- orders itself (deleteVersions).
CREATE TABLE orders (
    id           INTEGER PRIMARY KEY,
    customer_id  INTEGER NOT NULL,
    day          INTEGER NOT NULL,
    amount       REAL,
    ref          TEXT
);

-- Files uploaded through the pages, kept on disk until imported. The token
-- names an upload in URLs (random, so one analyst cannot guess another's).
CREATE TABLE uploads (
    id              INTEGER PRIMARY KEY,
    token           TEXT NOT NULL UNIQUE,
    user_id         INTEGER NOT NULL REFERENCES users(id) ON DELETE CASCADE,
    dir             TEXT NOT NULL,       -- folder holding the files
    orders_name     TEXT NOT NULL,       -- the file name the user chose
    orders_size     INTEGER NOT NULL,
    customers_name  TEXT,
    customers_size  INTEGER,
    created_at      TEXT NOT NULL
);

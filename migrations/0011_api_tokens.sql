-- API tokens: a campaign tool downloads the latest published at-risk list
-- of one dataset as CSV, sending "Authorization: Bearer TOKEN" (RFC 6750).
-- Each token is scoped to a single dataset, so a leaked token exposes one
-- list, and it goes when its dataset goes.
--
-- As with sessions (0002_auth.sql), only the SHA-256 of a token is stored:
-- a copy of the database lets no one download lists. A token is 256 random
-- bits, far too many to guess, so an unsalted fast hash is enough here,
-- unlike for passwords. prefix keeps the first 8 characters ("ebb_" and 4
-- random ones) so admins can tell tokens apart in a list; those 20 bits are
-- no help to an attacker.
--
-- Revoking sets revoked_at and keeps the row, so the list still shows who
-- made a token, when it was last used and when it stopped working. The
-- table holds a handful of rows, so dataset_id needs no index for the
-- cascade.
CREATE TABLE api_tokens (
    id            INTEGER PRIMARY KEY,
    dataset_id    INTEGER NOT NULL REFERENCES datasets(id) ON DELETE CASCADE,
    name          TEXT NOT NULL CHECK (name <> ''),
    hash          BLOB NOT NULL UNIQUE CHECK (length(hash) = 32),  -- SHA-256
    prefix        TEXT NOT NULL,
    created_by    TEXT NOT NULL,   -- name of the admin who made it
    created_at    TEXT NOT NULL,
    revoked_at    TEXT,            -- NULL while the token works
    last_used_at  TEXT             -- NULL until first used; updated at most once a minute
);

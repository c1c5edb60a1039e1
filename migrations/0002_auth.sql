-- Users, their server-side sessions, and installation settings.

CREATE TABLE users (
    id             INTEGER PRIMARY KEY,
    name           TEXT NOT NULL UNIQUE COLLATE NOCASE,
    role           TEXT NOT NULL CHECK (role IN ('viewer', 'analyst', 'admin')),
    password_hash  TEXT NOT NULL,          -- bcrypt
    disabled       INTEGER NOT NULL DEFAULT 0,
    created_at     TEXT NOT NULL,
    password_set_at TEXT NOT NULL
);

-- The cookie carries a random token; only its SHA-256 is stored, so a copy
-- of the database does not let anyone take over a session. Sign-out,
-- disabling a user and expiry delete or ignore rows, which ends a session
-- at once.
CREATE TABLE sessions (
    token_hash  TEXT PRIMARY KEY,
    user_id     INTEGER NOT NULL REFERENCES users(id) ON DELETE CASCADE,
    created_at  TEXT NOT NULL,
    seen_at     TEXT NOT NULL,   -- updated at most once a minute
    expires_at  TEXT NOT NULL,   -- absolute expiry
    flash       TEXT             -- one message for the next page
) WITHOUT ROWID;
CREATE INDEX sessions_by_user ON sessions (user_id);

-- Installation settings: the session signing key, the one-time setup token.
CREATE TABLE settings (
    key    TEXT PRIMARY KEY,
    value  TEXT NOT NULL
) WITHOUT ROWID;

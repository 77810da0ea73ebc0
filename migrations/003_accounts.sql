-- Accounts, sessions, personal access tokens and review notes.

-- Sessions of signed-in users (the table of github.com/alexedwards/scs/sqlite3store).
CREATE TABLE sessions (
    token  TEXT PRIMARY KEY,
    data   BLOB NOT NULL,
    expiry REAL NOT NULL
);
CREATE INDEX sessions_expiry_idx ON sessions(expiry);

-- Personal access tokens for scripts: only a SHA-256 of the token is stored.
CREATE TABLE api_tokens (
    id           INTEGER PRIMARY KEY,
    user_id      INTEGER NOT NULL REFERENCES users(id) ON DELETE CASCADE,
    name         TEXT NOT NULL CHECK (name <> ''),
    token_hash   TEXT NOT NULL UNIQUE,
    created_at   TEXT NOT NULL,
    last_used_at TEXT,
    revoked_at   TEXT
);

-- Why a curator accepted or rejected a contribution.
ALTER TABLE dates ADD COLUMN review_note TEXT NOT NULL DEFAULT '';
ALTER TABLE events ADD COLUMN review_note TEXT NOT NULL DEFAULT '';
ALTER TABLE users ADD COLUMN disabled INTEGER NOT NULL DEFAULT 0 CHECK (disabled IN (0, 1));

-- Files uploaded in the browser, kept between their preview and their commit.
CREATE TABLE uploads (
    id         INTEGER PRIMARY KEY,
    user_id    INTEGER NOT NULL REFERENCES users(id) ON DELETE CASCADE,
    kind       TEXT NOT NULL,
    section    TEXT NOT NULL DEFAULT '',
    file_name  TEXT NOT NULL,
    body       BLOB NOT NULL,
    created_at TEXT NOT NULL,
    batch_id   INTEGER REFERENCES change_batches(id) ON DELETE SET NULL  -- set once committed
);

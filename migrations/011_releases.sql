-- Releases: citable versions of the compilation. Each freezes the accepted records of its moment in a
-- snapshot file beside the database (file, relative to the releases folder), and keeps the numbers a
-- citation and a changelog need.
CREATE TABLE releases (
    id          INTEGER PRIMARY KEY,
    version     TEXT NOT NULL UNIQUE CHECK (version GLOB '[0-9A-Za-z]*' AND length(version) <= 40),
    title       TEXT NOT NULL CHECK (title <> ''),
    notes       TEXT NOT NULL DEFAULT '',
    doi         TEXT NOT NULL DEFAULT '',
    created_at  TEXT NOT NULL,
    created_by  INTEGER REFERENCES users(id) ON DELETE SET NULL,
    data_stamp  INTEGER NOT NULL,             -- the last change it includes (MAX(change_batches.id))
    file        TEXT NOT NULL,
    sha256      TEXT NOT NULL,                -- of the snapshot file as written
    counts_json TEXT NOT NULL,                -- the accepted records it holds, per kind
    left_json   TEXT NOT NULL DEFAULT '[]'    -- the pending and rejected records left out, named
);

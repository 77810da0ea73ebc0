-- Saved comparisons: a name, the comparison page's query string (every choice of the page), and the
-- state of the compilation it was computed on (the largest change_batches.id at the time), so the page can
-- say when the data have changed since.
CREATE TABLE comparisons (
    id         INTEGER PRIMARY KEY,
    name       TEXT NOT NULL CHECK (name <> '' AND length(name) <= 200),
    query      TEXT NOT NULL CHECK (length(query) <= 4000),
    data_stamp INTEGER NOT NULL CHECK (data_stamp >= 0),
    user_id    INTEGER REFERENCES users(id) ON DELETE SET NULL,
    created_at TEXT NOT NULL
);
CREATE INDEX comparisons_created_idx ON comparisons(created_at);

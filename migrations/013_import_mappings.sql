-- Mappings of the columns of tables as papers publish them onto our dates file, saved by name so that the
-- next table of the same layout is read the same way; the mapping each mapped import used, kept with its
-- change so anyone can see how a number got in; and, on an upload, whether its columns are to be mapped
-- and the mapping confirmed for it (its body is then the file as sent, .xlsx or CSV).
CREATE TABLE import_mappings (
    id           INTEGER PRIMARY KEY,
    name         TEXT NOT NULL UNIQUE CHECK (name <> '' AND length(name) <= 200),
    kind         TEXT NOT NULL CHECK (kind IN ('dates')),
    headers_json TEXT NOT NULL DEFAULT '[]',   -- the header of the file it was made for, joined per column
    mapping_json TEXT NOT NULL,
    created_by   INTEGER REFERENCES users(id) ON DELETE SET NULL,
    created_at   TEXT NOT NULL,
    updated_at   TEXT NOT NULL
);

CREATE TABLE batch_mappings (
    batch_id     INTEGER PRIMARY KEY REFERENCES change_batches(id) ON DELETE CASCADE,
    mapping_json TEXT NOT NULL
);

ALTER TABLE uploads ADD COLUMN mapped INTEGER NOT NULL DEFAULT 0 CHECK (mapped IN (0, 1));
ALTER TABLE uploads ADD COLUMN mapping_json TEXT;

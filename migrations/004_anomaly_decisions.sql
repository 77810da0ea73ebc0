-- What a curator decided about a detected anomaly: made it an event of the section, or rejected it with a
-- reason. An anomaly is known by its section, its series (e.g. Hg/TOC or Hg), its base and top heights and
-- the detection settings that found it (a canonical query string such as
-- "baseline=section&host=toc&min_run=2&toc_min=0.2&z_min=3.5"): other settings may find other anomalies.
CREATE TABLE anomaly_decisions (
    id            INTEGER PRIMARY KEY,
    section_id    INTEGER NOT NULL REFERENCES sections(id) ON DELETE CASCADE,
    series        TEXT NOT NULL CHECK (series <> ''),
    base_height_m REAL NOT NULL,
    top_height_m  REAL NOT NULL,
    settings      TEXT NOT NULL CHECK (settings <> ''),
    decision      TEXT NOT NULL CHECK (decision IN ('event', 'rejected')),
    event_id      INTEGER REFERENCES events(id) ON DELETE SET NULL,
    reason        TEXT NOT NULL DEFAULT '',
    user_id       INTEGER REFERENCES users(id) ON DELETE SET NULL,
    version       INTEGER NOT NULL DEFAULT 1,
    created_at    TEXT NOT NULL,
    updated_at    TEXT NOT NULL,
    CHECK (top_height_m >= base_height_m),
    CHECK (decision <> 'rejected' OR reason <> ''),
    UNIQUE (section_id, series, base_height_m, top_height_m, settings)
);

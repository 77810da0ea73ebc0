-- The initial schema of coeval. Ages in Ma (older = larger), every uncertainty stored as 1σ with the level
-- it was published at kept beside it, heights in metres above the section base, times as UTC RFC 3339 text.
-- Every editable record carries a version (optimistic locking) and a review state.

CREATE TABLE users (
    id            INTEGER PRIMARY KEY,
    name          TEXT NOT NULL UNIQUE CHECK (name <> ''),
    role          TEXT NOT NULL CHECK (role IN ('reader', 'contributor', 'curator', 'admin')),
    password_hash TEXT NOT NULL DEFAULT '',
    created_at    TEXT NOT NULL
);

-- A set of changes made together (one import, one edit), so it can be inspected and undone as a whole.
CREATE TABLE change_batches (
    id        INTEGER PRIMARY KEY,
    kind      TEXT NOT NULL,                 -- e.g. 'import dates', 'edit'
    source    TEXT NOT NULL DEFAULT '',      -- file name or form
    user_id   INTEGER REFERENCES users(id) ON DELETE SET NULL,
    at        TEXT NOT NULL,
    summary   TEXT NOT NULL DEFAULT ''
);

CREATE TABLE provinces (
    id          INTEGER PRIMARY KEY,
    name        TEXT NOT NULL UNIQUE CHECK (name <> ''),
    description TEXT NOT NULL DEFAULT '',
    version     INTEGER NOT NULL DEFAULT 1,
    created_at  TEXT NOT NULL,
    updated_at  TEXT NOT NULL
);

CREATE TABLE units (
    id               INTEGER PRIMARY KEY,
    province_id      INTEGER NOT NULL REFERENCES provinces(id) ON DELETE RESTRICT,
    name             TEXT NOT NULL CHECK (name <> ''),
    kind             TEXT NOT NULL DEFAULT 'other'
                     CHECK (kind IN ('flow', 'flow_group', 'sill', 'dyke', 'formation', 'other')),
    pile_position    INTEGER,
    volume_km3       REAL CHECK (volume_km3 IS NULL OR volume_km3 >= 0),
    volume_sigma_km3 REAL CHECK (volume_sigma_km3 IS NULL OR volume_sigma_km3 >= 0),
    latitude         REAL CHECK (latitude IS NULL OR latitude BETWEEN -90 AND 90),
    longitude        REAL CHECK (longitude IS NULL OR longitude BETWEEN -180 AND 180),
    notes            TEXT NOT NULL DEFAULT '',
    version          INTEGER NOT NULL DEFAULT 1,
    created_at       TEXT NOT NULL,
    updated_at       TEXT NOT NULL,
    UNIQUE (province_id, name)
);

-- Named sets of decay constants and monitor ages. Exactly one is the compilation's target.
CREATE TABLE calibrations (
    id                 INTEGER PRIMARY KEY,
    code               TEXT NOT NULL UNIQUE,
    name               TEXT NOT NULL,
    lambda_per_a       REAL NOT NULL CHECK (lambda_per_a > 0),
    lambda_sigma_per_a REAL CHECK (lambda_sigma_per_a IS NULL OR lambda_sigma_per_a >= 0),
    monitor            TEXT NOT NULL,
    monitor_age_ma     REAL NOT NULL CHECK (monitor_age_ma > 0),
    monitor_sigma_ma   REAL CHECK (monitor_sigma_ma IS NULL OR monitor_sigma_ma >= 0),
    source             TEXT NOT NULL,
    is_target          INTEGER NOT NULL DEFAULT 0 CHECK (is_target IN (0, 1))
);
CREATE UNIQUE INDEX calibrations_one_target ON calibrations(is_target) WHERE is_target = 1;

CREATE TABLE sections (
    id                   INTEGER PRIMARY KEY,
    name                 TEXT NOT NULL UNIQUE CHECK (name <> ''),
    kind                 TEXT NOT NULL DEFAULT 'outcrop' CHECK (kind IN ('outcrop', 'core')),
    latitude             REAL CHECK (latitude IS NULL OR latitude BETWEEN -90 AND 90),
    longitude            REAL CHECK (longitude IS NULL OR longitude BETWEEN -180 AND 180),
    palaeolatitude       REAL CHECK (palaeolatitude IS NULL OR palaeolatitude BETWEEN -90 AND 90),
    thermal_maturity     TEXT NOT NULL DEFAULT '',
    toc_threshold_wt_pct REAL NOT NULL DEFAULT 0.2 CHECK (toc_threshold_wt_pct >= 0),
    notes                TEXT NOT NULL DEFAULT '',
    version              INTEGER NOT NULL DEFAULT 1,
    created_at           TEXT NOT NULL,
    updated_at           TEXT NOT NULL
);

-- One published or measured age, of a unit or of a horizon in a section (never both).
CREATE TABLE dates (
    id                  INTEGER PRIMARY KEY,
    unit_id             INTEGER REFERENCES units(id) ON DELETE RESTRICT,
    section_id          INTEGER REFERENCES sections(id) ON DELETE RESTRICT,
    height_m            REAL,
    sample_code         TEXT NOT NULL CHECK (sample_code <> ''),
    method              TEXT NOT NULL CHECK (method IN ('upb_idtims', 'upb_laicpms', 'upb_sims', 'arar_plateau',
                            'arar_isochron', 'kar', 'reos', 'astro', 'biostrat', 'other')),
    material            TEXT NOT NULL DEFAULT '',
    interpretation      TEXT NOT NULL CHECK (interpretation IN ('eruption', 'crystallisation', 'deposition',
                            'maximum', 'minimum')),
    age_ma              REAL NOT NULL,
    sigma_ma            REAL NOT NULL CHECK (sigma_ma > 0),       -- analytical (U–Pb X), 1σ
    sigma_y_ma          REAL CHECK (sigma_y_ma IS NULL OR sigma_y_ma >= sigma_ma),  -- X ⊕ tracer, 1σ
    sigma_z_ma          REAL CHECK (sigma_z_ma IS NULL OR sigma_z_ma >= sigma_ma),  -- full external, 1σ
    sigma_level         INTEGER NOT NULL CHECK (sigma_level IN (1, 2)),           -- level as published
    tracer              TEXT NOT NULL DEFAULT '',
    monitor             TEXT NOT NULL DEFAULT '',
    monitor_age_ma      REAL CHECK (monitor_age_ma IS NULL OR monitor_age_ma > 0),
    lambda_per_a        REAL CHECK (lambda_per_a IS NULL OR lambda_per_a > 0),
    laboratory          TEXT NOT NULL DEFAULT '',
    citation            TEXT NOT NULL DEFAULT '',
    doi                 TEXT NOT NULL DEFAULT '',
    latitude            REAL CHECK (latitude IS NULL OR latitude BETWEEN -90 AND 90),
    longitude           REAL CHECK (longitude IS NULL OR longitude BETWEEN -180 AND 180),
    review_state        TEXT NOT NULL DEFAULT 'pending' CHECK (review_state IN ('pending', 'accepted', 'rejected')),
    notes               TEXT NOT NULL DEFAULT '',
    version             INTEGER NOT NULL DEFAULT 1,
    created_at          TEXT NOT NULL,
    updated_at          TEXT NOT NULL,
    CHECK ((unit_id IS NOT NULL AND section_id IS NULL AND height_m IS NULL)
        OR (unit_id IS NULL AND section_id IS NOT NULL AND height_m IS NOT NULL)),
    UNIQUE (sample_code, method)
);
CREATE INDEX dates_unit ON dates(unit_id);
CREATE INDEX dates_section ON dates(section_id);
CREATE INDEX dates_age ON dates(age_ma);

-- The proxies a measurement can carry, each with its one canonical unit.
CREATE TABLE proxies (
    code        TEXT PRIMARY KEY,
    name        TEXT NOT NULL,
    unit        TEXT NOT NULL,
    description TEXT NOT NULL DEFAULT ''
);
INSERT INTO proxies (code, name, unit, description) VALUES
    ('hg', 'Hg', 'ppb', 'Mercury concentration (ppb = ng/g)'),
    ('toc', 'TOC', 'wt%', 'Total organic carbon'),
    ('ts', 'TS', 'wt%', 'Total sulfur'),
    ('al', 'Al', 'wt%', 'Aluminium (Al = 0.5293 × Al₂O₃)'),
    ('d13c_org', 'δ¹³C org', '‰ VPDB', 'Carbon-isotope composition of organic matter'),
    ('d13c_carb', 'δ¹³C carb', '‰ VPDB', 'Carbon-isotope composition of carbonate'),
    ('os_initial', '¹⁸⁷Os/¹⁸⁸Os initial', 'ratio', 'Initial osmium-isotope ratio'),
    ('d202hg', 'δ²⁰²Hg', '‰', 'Mass-dependent Hg-isotope fractionation'),
    ('cap_d199hg', 'Δ¹⁹⁹Hg', '‰', 'Mass-independent Hg-isotope fractionation');

-- A sample of a section at a height, in long form: one row per proxy value.
CREATE TABLE measurements (
    id              INTEGER PRIMARY KEY,
    section_id      INTEGER NOT NULL REFERENCES sections(id) ON DELETE CASCADE,
    sample          TEXT NOT NULL CHECK (sample <> ''),
    height_m        REAL NOT NULL,
    proxy_code      TEXT NOT NULL REFERENCES proxies(code),
    value           REAL,                                   -- NULL when below detection
    sigma           REAL CHECK (sigma IS NULL OR sigma >= 0), -- 1σ, in the proxy's unit
    below_detection INTEGER NOT NULL DEFAULT 0 CHECK (below_detection IN (0, 1)),
    detection_limit REAL CHECK (detection_limit IS NULL OR detection_limit >= 0),
    method          TEXT NOT NULL DEFAULT '',
    batch_id        INTEGER REFERENCES change_batches(id) ON DELETE SET NULL,  -- the import that added it
    CHECK ((below_detection = 1 AND value IS NULL) OR (below_detection = 0 AND value IS NOT NULL)),
    UNIQUE (section_id, sample, proxy_code)
);
CREATE INDEX measurements_section_height ON measurements(section_id, height_m);

CREATE TABLE tie_points (
    id                 INTEGER PRIMARY KEY,
    section_id         INTEGER NOT NULL REFERENCES sections(id) ON DELETE CASCADE,
    label              TEXT NOT NULL CHECK (label <> ''),
    height_m           REAL NOT NULL,
    kind               TEXT NOT NULL CHECK (kind IN ('radiometric', 'biostratigraphic', 'astrochronologic',
                           'boundary', 'other')),
    distribution       TEXT NOT NULL CHECK (distribution IN ('normal', 'uniform')),
    age_ma             REAL,
    sigma_ma           REAL CHECK (sigma_ma IS NULL OR sigma_ma > 0),  -- 1σ
    sigma_level        INTEGER CHECK (sigma_level IS NULL OR sigma_level IN (1, 2)),
    age_min_ma         REAL,
    age_max_ma         REAL,
    date_id            INTEGER REFERENCES dates(id) ON DELETE SET NULL,
    notes              TEXT NOT NULL DEFAULT '',
    version            INTEGER NOT NULL DEFAULT 1,
    created_at         TEXT NOT NULL,
    updated_at         TEXT NOT NULL,
    CHECK ((distribution = 'normal' AND age_ma IS NOT NULL AND sigma_ma IS NOT NULL AND sigma_level IS NOT NULL
                AND age_min_ma IS NULL AND age_max_ma IS NULL)
        OR (distribution = 'uniform' AND age_min_ma IS NOT NULL AND age_max_ma IS NOT NULL AND age_max_ma > age_min_ma
                AND age_ma IS NULL AND sigma_ma IS NULL AND sigma_level IS NULL)),
    UNIQUE (section_id, label)
);

CREATE TABLE hiatuses (
    id              INTEGER PRIMARY KEY,
    section_id      INTEGER NOT NULL REFERENCES sections(id) ON DELETE CASCADE,
    height_m        REAL NOT NULL,
    min_duration_ma REAL NOT NULL CHECK (min_duration_ma >= 0),
    notes           TEXT NOT NULL DEFAULT '',
    version         INTEGER NOT NULL DEFAULT 1,
    created_at      TEXT NOT NULL,
    updated_at      TEXT NOT NULL
);

-- Events of several sections correlated as one.
CREATE TABLE event_groups (
    id         INTEGER PRIMARY KEY,
    name       TEXT NOT NULL UNIQUE,
    notes      TEXT NOT NULL DEFAULT '',
    version    INTEGER NOT NULL DEFAULT 1,
    created_at TEXT NOT NULL,
    updated_at TEXT NOT NULL
);

-- Something in the sedimentary record: a horizon or interval of a section, or an event dated directly.
CREATE TABLE events (
    id            INTEGER PRIMARY KEY,
    section_id    INTEGER REFERENCES sections(id) ON DELETE CASCADE,
    group_id      INTEGER REFERENCES event_groups(id) ON DELETE SET NULL,
    name          TEXT NOT NULL CHECK (name <> ''),
    kind          TEXT NOT NULL CHECK (kind IN ('hg_anomaly', 'cie_onset', 'cie', 'extinction', 'boundary',
                      'anoxia', 'other')),
    base_height_m REAL,
    top_height_m  REAL,
    age_ma        REAL,
    sigma_ma      REAL CHECK (sigma_ma IS NULL OR sigma_ma > 0),
    date_id       INTEGER REFERENCES dates(id) ON DELETE SET NULL,
    origin        TEXT NOT NULL DEFAULT 'entered' CHECK (origin IN ('entered', 'detected')),
    review_state  TEXT NOT NULL DEFAULT 'pending' CHECK (review_state IN ('pending', 'accepted', 'rejected')),
    notes         TEXT NOT NULL DEFAULT '',
    version       INTEGER NOT NULL DEFAULT 1,
    created_at    TEXT NOT NULL,
    updated_at    TEXT NOT NULL,
    CHECK (section_id IS NULL OR base_height_m IS NOT NULL),
    CHECK (top_height_m IS NULL OR base_height_m IS NULL OR top_height_m >= base_height_m),
    UNIQUE (section_id, name)
);

-- An eruptive phase of a province: a set of units, or an age interval found from the density.
CREATE TABLE pulses (
    id          INTEGER PRIMARY KEY,
    province_id INTEGER NOT NULL REFERENCES provinces(id) ON DELETE CASCADE,
    name        TEXT NOT NULL,
    start_ma    REAL,
    end_ma      REAL,
    notes       TEXT NOT NULL DEFAULT '',
    version     INTEGER NOT NULL DEFAULT 1,
    created_at  TEXT NOT NULL,
    updated_at  TEXT NOT NULL,
    CHECK (start_ma IS NULL OR end_ma IS NULL OR start_ma >= end_ma),
    UNIQUE (province_id, name)
);

CREATE TABLE pulse_units (
    pulse_id INTEGER NOT NULL REFERENCES pulses(id) ON DELETE CASCADE,
    unit_id  INTEGER NOT NULL REFERENCES units(id) ON DELETE CASCADE,
    PRIMARY KEY (pulse_id, unit_id)
);

-- Every change to a record: who, when, before and after (JSON; NULL before = created, NULL after = deleted).
CREATE TABLE revisions (
    id          INTEGER PRIMARY KEY,
    batch_id    INTEGER NOT NULL REFERENCES change_batches(id) ON DELETE CASCADE,
    record_type TEXT NOT NULL,
    record_id   INTEGER NOT NULL,
    before_json TEXT,
    after_json  TEXT,
    CHECK (before_json IS NOT NULL OR after_json IS NOT NULL)
);
CREATE INDEX revisions_record ON revisions(record_type, record_id);

CREATE TABLE settings (
    key   TEXT PRIMARY KEY,
    value TEXT NOT NULL
);

-- Versions of what each computed result reads, kept by the database itself (issue 13): every insert,
-- update or delete of a province's record, its units or their dates bumps the province's version; of a
-- section's record, its measurements, tie points, hiatuses or events (or of a date one of its tie points
-- is linked to) bumps the section's version; of a calibration, the calibrations' version; of an event
-- without a section, the direct events' version; and adding or deleting any event, the events' version.
-- The computed timelines, section analyses and comparisons are kept under the versions of what they
-- read (one small read), so an edit to one province or section leaves every other result kept.
-- Triggers keep them, so every way of writing (forms, imports, review, undo, deletes) is covered; rows
-- are never deleted, so a version never repeats (not even when a deleted id is used again).
CREATE TABLE data_versions (
    kind    TEXT NOT NULL CHECK (kind IN ('province', 'section', 'calibrations', 'direct_events', 'events')),
    id      INTEGER NOT NULL,
    version INTEGER NOT NULL CHECK (version >= 1),
    PRIMARY KEY (kind, id)
) WITHOUT ROWID;

INSERT INTO data_versions (kind, id, version) SELECT 'province', id, 1 FROM provinces;
INSERT INTO data_versions (kind, id, version) SELECT 'section', id, 1 FROM sections;
INSERT INTO data_versions (kind, id, version) VALUES ('calibrations', 0, 1), ('direct_events', 0, 1), ('events', 0, 1);

-- Tie points are found by the date they are linked to when that date changes.
CREATE INDEX tie_points_date ON tie_points(date_id);

-- Provinces: the record (its name is also in its units' and dates' rows, and in the dates tie points
-- are linked to).
CREATE TRIGGER data_versions_province_insert AFTER INSERT ON provinces BEGIN
    INSERT INTO data_versions (kind, id, version) VALUES ('province', NEW.id, 1)
        ON CONFLICT (kind, id) DO UPDATE SET version = version + 1;
END;
CREATE TRIGGER data_versions_province_update AFTER UPDATE ON provinces BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'province' AND id IN (OLD.id, NEW.id);
END;
CREATE TRIGGER data_versions_province_rename AFTER UPDATE OF name ON provinces BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'section' AND id IN (
        SELECT t.section_id FROM tie_points t JOIN dates d ON d.id = t.date_id JOIN units u ON u.id = d.unit_id
        WHERE u.province_id = NEW.id);
END;
CREATE TRIGGER data_versions_province_delete AFTER DELETE ON provinces BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'province' AND id = OLD.id;
END;

-- Units: the province they belong to (both, when a unit moves).
CREATE TRIGGER data_versions_unit_insert AFTER INSERT ON units BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'province' AND id = NEW.province_id;
END;
CREATE TRIGGER data_versions_unit_update AFTER UPDATE ON units BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'province' AND id IN (OLD.province_id, NEW.province_id);
END;
CREATE TRIGGER data_versions_unit_rename AFTER UPDATE OF name, province_id ON units BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'section' AND id IN (
        SELECT t.section_id FROM tie_points t JOIN dates d ON d.id = t.date_id WHERE d.unit_id = NEW.id);
END;
CREATE TRIGGER data_versions_unit_delete AFTER DELETE ON units BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'province' AND id = OLD.province_id;
END;

-- Dates: the province of their unit (both, when a date moves), and the sections whose tie points are
-- linked to them.
CREATE TRIGGER data_versions_date_insert AFTER INSERT ON dates WHEN NEW.unit_id IS NOT NULL BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'province' AND id = (SELECT province_id FROM units WHERE id = NEW.unit_id);
END;
CREATE TRIGGER data_versions_date_update AFTER UPDATE ON dates BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'province' AND id IN (
        SELECT province_id FROM units WHERE id IN (OLD.unit_id, NEW.unit_id));
    UPDATE data_versions SET version = version + 1 WHERE kind = 'section' AND id IN (
        SELECT section_id FROM tie_points WHERE date_id IN (OLD.id, NEW.id));
END;
-- Before the delete: the tie points still name the date.
CREATE TRIGGER data_versions_date_delete BEFORE DELETE ON dates BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'province' AND id = (SELECT province_id FROM units WHERE id = OLD.unit_id);
    UPDATE data_versions SET version = version + 1 WHERE kind = 'section' AND id IN (
        SELECT section_id FROM tie_points WHERE date_id = OLD.id);
END;

-- Sections: the record, its measurements, tie points, hiatuses and events.
CREATE TRIGGER data_versions_section_insert AFTER INSERT ON sections BEGIN
    INSERT INTO data_versions (kind, id, version) VALUES ('section', NEW.id, 1)
        ON CONFLICT (kind, id) DO UPDATE SET version = version + 1;
END;
CREATE TRIGGER data_versions_section_update AFTER UPDATE ON sections BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'section' AND id IN (OLD.id, NEW.id);
END;
CREATE TRIGGER data_versions_section_delete AFTER DELETE ON sections BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'section' AND id = OLD.id;
END;

CREATE TRIGGER data_versions_measurement_insert AFTER INSERT ON measurements BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'section' AND id = NEW.section_id;
END;
CREATE TRIGGER data_versions_measurement_update AFTER UPDATE ON measurements BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'section' AND id IN (OLD.section_id, NEW.section_id);
END;
CREATE TRIGGER data_versions_measurement_delete AFTER DELETE ON measurements BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'section' AND id = OLD.section_id;
END;

CREATE TRIGGER data_versions_tie_insert AFTER INSERT ON tie_points BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'section' AND id = NEW.section_id;
END;
CREATE TRIGGER data_versions_tie_update AFTER UPDATE ON tie_points BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'section' AND id IN (OLD.section_id, NEW.section_id);
END;
CREATE TRIGGER data_versions_tie_delete AFTER DELETE ON tie_points BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'section' AND id = OLD.section_id;
END;

CREATE TRIGGER data_versions_hiatus_insert AFTER INSERT ON hiatuses BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'section' AND id = NEW.section_id;
END;
CREATE TRIGGER data_versions_hiatus_update AFTER UPDATE ON hiatuses BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'section' AND id IN (OLD.section_id, NEW.section_id);
END;
CREATE TRIGGER data_versions_hiatus_delete AFTER DELETE ON hiatuses BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'section' AND id = OLD.section_id;
END;

-- Events: their section, or the direct events when they have none; adding or deleting any event also
-- bumps the events' version (a comparison checks that the events it names exist).
CREATE TRIGGER data_versions_event_insert AFTER INSERT ON events BEGIN
    UPDATE data_versions SET version = version + 1 WHERE (kind = 'section' AND id = NEW.section_id)
        OR (kind = 'direct_events' AND NEW.section_id IS NULL) OR kind = 'events';
END;
CREATE TRIGGER data_versions_event_update AFTER UPDATE ON events BEGIN
    UPDATE data_versions SET version = version + 1 WHERE (kind = 'section' AND id IN (OLD.section_id, NEW.section_id))
        OR (kind = 'direct_events' AND (OLD.section_id IS NULL OR NEW.section_id IS NULL));
END;
CREATE TRIGGER data_versions_event_delete AFTER DELETE ON events BEGIN
    UPDATE data_versions SET version = version + 1 WHERE (kind = 'section' AND id = OLD.section_id)
        OR (kind = 'direct_events' AND OLD.section_id IS NULL) OR kind = 'events';
END;

-- Calibrations: one version for all (the section analyses and comparisons read them all).
CREATE TRIGGER data_versions_calibration_insert AFTER INSERT ON calibrations BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'calibrations';
END;
CREATE TRIGGER data_versions_calibration_update AFTER UPDATE ON calibrations BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'calibrations';
END;
CREATE TRIGGER data_versions_calibration_delete AFTER DELETE ON calibrations BEGIN
    UPDATE data_versions SET version = version + 1 WHERE kind = 'calibrations';
END;

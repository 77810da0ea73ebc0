-- A province may carry a palaeomagnetic pole (north pole convention): its latitude and longitude in degrees,
-- its A95 in degrees (the radius of the 95 % confidence circle about the pole) and where it comes from. The
-- map computes its units' palaeolatitudes from it. All four are given together or not at all; the importer
-- and the forms check the same rules and say which field is wrong (store/import.go, parseProvinceRow).
-- Longitudes are stored normalised to -180..180.
ALTER TABLE provinces ADD COLUMN pole_latitude REAL CHECK (pole_latitude BETWEEN -90 AND 90);
ALTER TABLE provinces ADD COLUMN pole_longitude REAL CHECK (pole_longitude BETWEEN -180 AND 180);
ALTER TABLE provinces ADD COLUMN pole_a95 REAL CHECK (pole_a95 > 0 AND pole_a95 <= 30);
ALTER TABLE provinces ADD COLUMN pole_source TEXT NOT NULL DEFAULT '';

-- The recorded states of provinces get the same fields (no pole), so that undoing or restoring a change made
-- before this migration compares with, and writes back, the state the province really had.
UPDATE revisions SET before_json = json_set(before_json, '$.pole_latitude', json('null'), '$.pole_longitude', json('null'),
    '$.pole_a95', json('null'), '$.pole_source', '')
    WHERE record_type = 'province' AND before_json IS NOT NULL;
UPDATE revisions SET after_json = json_set(after_json, '$.pole_latitude', json('null'), '$.pole_longitude', json('null'),
    '$.pole_a95', json('null'), '$.pole_source', '')
    WHERE record_type = 'province' AND after_json IS NOT NULL;

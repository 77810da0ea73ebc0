-- The likely-duplicate check of a dates import looks for a date of the same unit and method at the same age.
-- With only dates_unit it scanned every date of the unit, once per imported row (quadratic in dates per unit);
-- this index answers it by a range. Its first column serves every lookup by unit, so dates_unit goes.
CREATE INDEX dates_unit_method_age ON dates(unit_id, method, age_ma);
DROP INDEX dates_unit;

-- Indexes for the dates list's sort keys and for the pending counts of a change.
-- Each sort of the dates list reads its page from the index of its key, whose entries are in (key, id)
-- order, so a page deep in the list costs what the first does (store.DatesPage). Age and added (the id)
-- had theirs already (dates_age, the table itself).
CREATE INDEX dates_sample ON dates(sample_code);
CREATE INDEX dates_method ON dates(method);
CREATE INDEX dates_material ON dates(material);
CREATE INDEX dates_laboratory ON dates(laboratory);
-- The σ/age sort: the same expression as the query's sort key, or the index is not used.
CREATE INDEX dates_sigma_rel ON dates(coalesce(sigma_ma / age_ma, -1e308));
-- The unit sort reads each unit's dates in id order (dates_unit_method_age holds them by method and age).
CREATE INDEX dates_unit_id ON dates(unit_id, id);
-- Pending records only, as dates_pending: a change's pending count starts from them when they are fewer
-- than the change's revisions.
CREATE INDEX events_pending ON events(id) WHERE review_state = 'pending';
CREATE INDEX tie_points_pending ON tie_points(id) WHERE review_state = 'pending';
CREATE INDEX hiatuses_pending ON hiatuses(id) WHERE review_state = 'pending';

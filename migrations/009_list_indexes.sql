-- Indexes for the lists and counts that grow with the compilation.
-- The revisions of one change (the feed's record counts, a change's page, accept, undo), in order.
CREATE INDEX revisions_batch ON revisions(batch_id, id);
-- The measurements an undone import removes (and the foreign key's SET NULL when a change is deleted).
CREATE INDEX measurements_batch ON measurements(batch_id);
-- Pending dates only: the review queue and the pending count of a change.
CREATE INDEX dates_pending ON dates(id) WHERE review_state = 'pending';

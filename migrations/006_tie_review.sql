-- Tie points are reviewed like dates and events: a contributor's tie is pending until a curator accepts it
-- (or rejects it with a reason), and age models use accepted ties unless a page's include= says otherwise.
-- Ties stored before this migration were entered by curators or imported from the command line, so they
-- stay accepted; so do ties imported later without a review_state.
ALTER TABLE tie_points ADD COLUMN review_state TEXT NOT NULL DEFAULT 'accepted'
    CHECK (review_state IN ('pending', 'accepted', 'rejected'));
ALTER TABLE tie_points ADD COLUMN review_note TEXT NOT NULL DEFAULT '';

-- The recorded states of those ties get the same two fields, so that undoing or restoring a change made
-- before this migration compares with, and writes back, the state the tie really had.
UPDATE revisions SET before_json = json_set(before_json, '$.review_state', 'accepted', '$.review_note', '')
    WHERE record_type = 'tie_point' AND before_json IS NOT NULL;
UPDATE revisions SET after_json = json_set(after_json, '$.review_state', 'accepted', '$.review_note', '')
    WHERE record_type = 'tie_point' AND after_json IS NOT NULL;

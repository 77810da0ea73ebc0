-- Hiatuses are reviewed like tie points: the age–height model honours them, so a contributor's hiatus is
-- pending until a curator accepts it (or rejects it with a reason), and age models use accepted hiatuses
-- unless a page's include= says otherwise. Hiatuses stored before this migration were not entered through
-- the application's forms or importers, so they stay accepted. No revision holds a hiatus's state yet
-- (nothing recorded hiatus changes before this migration), so there are no recorded states to update.
ALTER TABLE hiatuses ADD COLUMN review_state TEXT NOT NULL DEFAULT 'accepted'
    CHECK (review_state IN ('pending', 'accepted', 'rejected'));
ALTER TABLE hiatuses ADD COLUMN review_note TEXT NOT NULL DEFAULT '';

-- The age model refuses two hiatuses at one height of a section; a restore or an undo must not make them.
CREATE UNIQUE INDEX hiatuses_section_height ON hiatuses (section_id, height_m);

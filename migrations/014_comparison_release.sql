-- A saved comparison can be pinned to a release: it is then computed on that release's snapshot, and its
-- page says whether today's data would change it. Empty for a comparison of the current data. (No
-- foreign key: a release's own snapshot holds no releases.)
ALTER TABLE comparisons ADD COLUMN release_version TEXT NOT NULL DEFAULT '' CHECK (length(release_version) <= 40);

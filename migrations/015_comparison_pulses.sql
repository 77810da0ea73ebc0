-- A saved comparison keeps the pulses it was computed with (each one's code, mode and age range, as JSON), so
-- that when it is opened again on changed data its page can say which of today's pulses is which, by the
-- overlap of their age ranges, and which pulse of the saved comparison has no counterpart any more.
-- Empty for comparisons saved before, or without a pulse.
ALTER TABLE comparisons ADD COLUMN pulses TEXT NOT NULL DEFAULT '' CHECK (pulses = '' OR json_valid(pulses));

-- 0002_track_outcomes: the track's other verdicts get outcome codes: 5 initialising (used to start the track),
-- 6 before_start (held before the track had a position), 7 unused (e.g. a course below the speed threshold).
ALTER TABLE measurements DROP CONSTRAINT measurements_outcome_check;
ALTER TABLE measurements ADD CONSTRAINT measurements_outcome_check CHECK (outcome BETWEEN 0 AND 7);
COMMENT ON COLUMN measurements.outcome IS
    '0 accepted, 1 gated, 2 too_late, 3 duplicate, 4 pending, 5 initialising, 6 before_start, 7 unused.';

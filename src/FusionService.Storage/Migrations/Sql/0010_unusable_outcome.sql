-- 0010_unusable_outcome: outcome 8, unusable: the filter failed numerically on the measurement (an innovation
-- covariance that is not positive definite, a value that is not finite). The track skips it and goes on; the verdict
-- says so, so that the measurement is judged (never left pending) and a replay judges it the same way.
ALTER TABLE measurement_verdicts DROP CONSTRAINT measurement_verdicts_outcome_check;
ALTER TABLE measurement_verdicts ADD CONSTRAINT measurement_verdicts_outcome_check CHECK (outcome BETWEEN 0 AND 8);
COMMENT ON COLUMN measurement_verdicts.outcome IS
    '0 accepted, 1 gated, 2 too_late, 3 duplicate, 4 pending, 5 initialising, 6 before_start, 7 unused, 8 unusable.';

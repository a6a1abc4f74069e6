-- 0006_whitened_innovations: each verdict keeps the whitened innovation w = L^-1 nu (S = L L^T) of the measurement,
-- so that the diagnostics can test the innovations' whiteness (their autocorrelation over time) from the store, not
-- only their mean NIS. real (4 bytes) is enough: w is standard normal for a consistent filter and is only summed into
-- autocorrelations. NULL where no innovation was formed, and for verdicts written before this migration.
ALTER TABLE measurement_verdicts ADD COLUMN w0 real NULL, ADD COLUMN w1 real NULL;
COMMENT ON COLUMN measurement_verdicts.w0 IS
    'First component of the whitened innovation (dimensionless; GNSS position: east), NULL when none.';
COMMENT ON COLUMN measurement_verdicts.w1 IS
    'Second component of the whitened innovation for 2-D measurements (GNSS position: north), NULL otherwise.';

-- judged_measurements(...) returns the whitened components beside the NIS (its result type changes, so it is made anew).
DROP FUNCTION judged_measurements(uuid, text, bigint, bigint, timestamptz, timestamptz);
CREATE FUNCTION judged_measurements(
    p_fleet_id uuid, p_vehicle_id text, p_from_us bigint, p_to_us bigint, p_from_at timestamptz, p_to_at timestamptz)
RETURNS TABLE (
    fleet_id uuid, vehicle_id text, kind smallint, time_us bigint, measured_at timestamptz, message_key bigint,
    received_at timestamptz, v0 double precision, v1 double precision, v2 double precision, flags integer,
    outcome smallint, nis double precision, track_reset boolean, w0 real, w1 real)
LANGUAGE sql STABLE AS $$
    SELECT m.fleet_id, m.vehicle_id, m.kind, m.time_us, m.measured_at, m.message_key, m.received_at,
           m.v0, m.v1, m.v2, m.flags,
           coalesce(v.outcome, m.outcome),
           CASE WHEN v.outcome IS NULL THEN m.nis ELSE v.nis END,
           coalesce(v.track_reset, m.track_reset),
           v.w0, v.w1
    FROM measurements m
    LEFT JOIN LATERAL (
        SELECT d.outcome, d.nis, d.track_reset, d.w0, d.w1
        FROM measurement_verdicts d
        WHERE d.fleet_id = m.fleet_id AND d.vehicle_id = m.vehicle_id AND d.time_us = m.time_us
          AND d.kind = m.kind AND d.message_key = m.message_key AND d.measured_at = m.measured_at
        ORDER BY d.verdict_id DESC
        LIMIT 1
    ) v ON true
    WHERE m.fleet_id = p_fleet_id AND m.vehicle_id = p_vehicle_id
      AND m.time_us >= p_from_us AND m.time_us < p_to_us
      AND m.measured_at >= p_from_at AND m.measured_at < p_to_at
$$;
COMMENT ON FUNCTION judged_measurements(uuid, text, bigint, bigint, timestamptz, timestamptz) IS
    'One vehicle''s measurements in a time range, each with its latest verdict (and whitened innovation) from measurement_verdicts.'
;

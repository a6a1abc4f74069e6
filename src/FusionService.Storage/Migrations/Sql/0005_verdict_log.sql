-- 0005_verdict_log: the filter's verdicts are appended to a log of their own instead of being written onto the
-- measurement rows. Updating a stored row costs PostgreSQL an index lookup, a new row version and its write-ahead
-- log record; appending a verdict by binary COPY costs an insert. The log keeps every verdict a measurement ever got
-- (a replay after late data re-judges the measurements after it); the latest, by verdict_id, is the one that counts.
-- measurements.outcome, nis and track_reset keep what was written there before this migration (and 4, pending, for
-- rows stored since); judged_measurements() gives each measurement its latest verdict, or those columns when the
-- log has none. Daily partitions on measured_at like measurements, made and dropped with them.
CREATE TABLE measurement_verdicts (
    fleet_id    uuid             NOT NULL,
    vehicle_id  text             NOT NULL,
    kind        smallint         NOT NULL CHECK (kind >= 0),
    time_us     bigint           NOT NULL,
    message_key bigint           NOT NULL,
    measured_at timestamptz      NOT NULL,
    verdict_id  bigint           GENERATED ALWAYS AS IDENTITY,
    outcome     smallint         NOT NULL CHECK (outcome BETWEEN 0 AND 7),
    nis         double precision NULL CHECK (nis >= 0),
    track_reset boolean          NOT NULL
) PARTITION BY RANGE (measured_at);
CREATE INDEX measurement_verdicts_latest ON measurement_verdicts (fleet_id, vehicle_id, time_us, kind, message_key, verdict_id DESC);
COMMENT ON TABLE measurement_verdicts IS 'Every verdict of the filter on a stored measurement, appended; the highest verdict_id of a measurement counts.';
COMMENT ON COLUMN measurement_verdicts.outcome IS
    '0 accepted, 1 gated, 2 too_late, 3 duplicate, 4 pending, 5 initialising, 6 before_start, 7 unused.';

-- A partition for every day that has a measurements partition, so that every stored measurement can be judged.
DO $$
DECLARE
    part record;
BEGIN
    FOR part IN
        SELECT c.relname, pg_get_expr(c.relpartbound, c.oid) AS bound
        FROM pg_inherits i
        JOIN pg_class c ON c.oid = i.inhrelid
        JOIN pg_class p ON p.oid = i.inhparent
        WHERE p.relname = 'measurements' AND p.relnamespace = current_schema()::regnamespace
          AND c.relname ~ '^measurements_p[0-9]{8}$'
    LOOP
        EXECUTE format('CREATE TABLE %I PARTITION OF measurement_verdicts %s',
                       'measurement_verdicts_p' || substr(part.relname, length('measurements_p') + 1), part.bound);
    END LOOP;
END
$$;

-- One vehicle's measurements in [from_us, to_us) of measurement time (and [from_at, to_at) of measured_at, the same
-- instants, for partition pruning), each with its latest verdict. A single SQL statement, so PostgreSQL inlines it
-- into the calling query with the arguments in place. The latest verdict is looked up per measurement (one descent of
-- measurement_verdicts_latest, newest first): a join of the two ranges as sets can be faster with fresh statistics,
-- but with none (a day's partition just filled) the planner may rescan the whole verdict range for every measurement.
CREATE FUNCTION judged_measurements(
    p_fleet_id uuid, p_vehicle_id text, p_from_us bigint, p_to_us bigint, p_from_at timestamptz, p_to_at timestamptz)
RETURNS TABLE (
    fleet_id uuid, vehicle_id text, kind smallint, time_us bigint, measured_at timestamptz, message_key bigint,
    received_at timestamptz, v0 double precision, v1 double precision, v2 double precision, flags integer,
    outcome smallint, nis double precision, track_reset boolean)
LANGUAGE sql STABLE AS $$
    SELECT m.fleet_id, m.vehicle_id, m.kind, m.time_us, m.measured_at, m.message_key, m.received_at,
           m.v0, m.v1, m.v2, m.flags,
           coalesce(v.outcome, m.outcome),
           CASE WHEN v.outcome IS NULL THEN m.nis ELSE v.nis END,
           coalesce(v.track_reset, m.track_reset)
    FROM measurements m
    LEFT JOIN LATERAL (
        SELECT d.outcome, d.nis, d.track_reset
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
    'One vehicle''s measurements in a time range, each with its latest verdict from measurement_verdicts.'
;

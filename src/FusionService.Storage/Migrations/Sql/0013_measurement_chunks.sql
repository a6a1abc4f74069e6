-- 0013_measurement_chunks: measurements and their verdicts stored per vehicle in chunks, one row for the messages of
-- one vehicle that one commit stored within one ten-minute window, instead of one row per measurement in
-- measurements plus one per verdict in measurement_verdicts (docs/storage-cost.md has the comparison that chose this).
--
-- A chunk holds its measurements as parallel arrays in canonical order (time_us, kind, message_key): element i of
-- every array describes the same measurement. The verdict arrays (outcome ... w1) start as pending (4, nulls) and
-- are overwritten in place when the vehicle's track judges the measurements: only the newest verdict is kept. The
-- fleet and vehicle are stored once per chunk, the measurement time once (no timestamptz copy of it), and PostgreSQL
-- compresses the arrays (TOAST; lz4 where the server has it).
--
-- Window: every measurement of a chunk lies in one aligned ten-minute window of measurement time
-- ([k * 600 s, (k + 1) * 600 s) of Unix time), so a chunk never spans more than 600 s, never crosses a UTC day and
-- lies wholly in the daily partition of its first_us: retention by day drops exactly that day's measurements, and a
-- range read finds every chunk it needs among those with first_us in (from - 600 s, to).
--
-- Duplicates: a message already stored (same vehicle, kind, time and message key) is not stored again. The ingest
-- path takes a transaction-scoped advisory lock per vehicle, reads the keys of the chunks its rows' windows can hold,
-- and stores only the new rows (MeasurementIngest).
CREATE TABLE measurement_chunks (
    fleet_id    uuid               NOT NULL,
    vehicle_id  text               NOT NULL,
    first_us    bigint             NOT NULL,
    chunk_id    bigint             GENERATED ALWAYS AS IDENTITY,
    last_us     bigint             NOT NULL,
    count       integer            NOT NULL CHECK (count > 0),
    time_us     bigint[]           NOT NULL,
    kind        smallint[]         NOT NULL,
    message_key bigint[]           NOT NULL,
    received_us bigint[]           NOT NULL,
    v0          double precision[] NOT NULL,
    v1          double precision[] NOT NULL,
    v2          double precision[] NOT NULL,
    flags       integer[]          NOT NULL,
    outcome     smallint[]         NOT NULL,
    nis         double precision[] NOT NULL,
    track_reset boolean[]          NOT NULL,
    w0          real[]             NOT NULL,
    w1          real[]             NOT NULL,
    CONSTRAINT measurement_chunks_one_window CHECK (first_us <= last_us AND first_us / 600000000 = last_us / 600000000),
    CONSTRAINT measurement_chunks_counts CHECK (
        cardinality(time_us) = count AND cardinality(kind) = count AND cardinality(message_key) = count
        AND cardinality(received_us) = count AND cardinality(v0) = count AND cardinality(v1) = count
        AND cardinality(v2) = count AND cardinality(flags) = count AND cardinality(outcome) = count
        AND cardinality(nis) = count AND cardinality(track_reset) = count AND cardinality(w0) = count
        AND cardinality(w1) = count),
    CONSTRAINT measurement_chunks_outcome_codes CHECK (0 <= ALL (outcome) AND 8 >= ALL (outcome)),
    CONSTRAINT measurement_chunks_nis_non_negative CHECK (0 <= ALL (nis)),
    PRIMARY KEY (fleet_id, vehicle_id, first_us, chunk_id)
) PARTITION BY RANGE (first_us);
-- The chunks that can hold the instants [lo, hi] of one vehicle are those with last_us >= lo and first_us <= hi: for data
-- arriving in order (the usual case) one or none, found by this index without reading the window's older chunks, of
-- which a gateway that mixes many vehicles in each upload leaves hundreds of small ones.
CREATE INDEX measurement_chunks_last ON measurement_chunks (fleet_id, vehicle_id, last_us);
COMMENT ON TABLE measurement_chunks IS
    'Accepted sensor messages and the filter''s newest verdict on each, as parallel arrays per vehicle, commit and ten-minute window; daily partitions on first_us (Unix microseconds, UTC days).';
COMMENT ON COLUMN measurement_chunks.first_us IS 'Smallest time_us of the chunk, Unix microseconds (UTC); the partition key.';
COMMENT ON COLUMN measurement_chunks.last_us IS 'Largest time_us of the chunk; in the same ten-minute window as first_us.';
COMMENT ON COLUMN measurement_chunks.time_us IS 'Measurement times, Unix microseconds (UTC), ascending with kind and message_key.';
COMMENT ON COLUMN measurement_chunks.received_us IS 'When the service received each message, Unix microseconds (UTC).';
COMMENT ON COLUMN measurement_chunks.outcome IS
    'Newest verdict per measurement: 0 accepted, 1 gated, 2 too_late, 3 duplicate, 4 pending, 5 initialising, 6 before_start, 7 unused, 8 unusable.';
COMMENT ON COLUMN measurement_chunks.nis IS 'Normalised innovation squared per measurement (dimensionless), null when no update was attempted.';
COMMENT ON COLUMN measurement_chunks.w0 IS 'First component of the whitened innovation (GNSS position: east), null when none.';
COMMENT ON COLUMN measurement_chunks.w1 IS 'Second component of the whitened innovation (GNSS position: north), null otherwise.';

-- Partitions are made with toast_tuple_target = 128 (here and by PartitionMaintainer): the arrays leave the row once it
-- passes 128 bytes, so a verdict update copies pointers to the unchanged measurement arrays, not the arrays themselves.

-- lz4 where the server was built with it (faster to read than the default pglz and the same size on the measured van-day).
DO $$
BEGIN
    IF EXISTS (SELECT 1 FROM pg_settings WHERE name = 'default_toast_compression' AND 'lz4' = ANY (enumvals)) THEN
        ALTER TABLE measurement_chunks
            ALTER COLUMN time_us SET COMPRESSION lz4, ALTER COLUMN kind SET COMPRESSION lz4,
            ALTER COLUMN message_key SET COMPRESSION lz4, ALTER COLUMN received_us SET COMPRESSION lz4,
            ALTER COLUMN v0 SET COMPRESSION lz4, ALTER COLUMN v1 SET COMPRESSION lz4, ALTER COLUMN v2 SET COMPRESSION lz4,
            ALTER COLUMN flags SET COMPRESSION lz4, ALTER COLUMN outcome SET COMPRESSION lz4,
            ALTER COLUMN nis SET COMPRESSION lz4, ALTER COLUMN track_reset SET COMPRESSION lz4,
            ALTER COLUMN w0 SET COMPRESSION lz4, ALTER COLUMN w1 SET COMPRESSION lz4;
    END IF;
END
$$;

-- A partition for every day that has a measurements partition, then every stored measurement with its newest verdict
-- (the old judged_measurements) moved into chunks: one per vehicle and ten-minute window.
DO $$
DECLARE
    part record;
    day_start bigint;
BEGIN
    FOR part IN
        SELECT c.relname
        FROM pg_inherits i
        JOIN pg_class c ON c.oid = i.inhrelid
        JOIN pg_class p ON p.oid = i.inhparent
        WHERE p.relname = 'measurements' AND p.relnamespace = current_schema()::regnamespace
          AND c.relname ~ '^measurements_p[0-9]{8}$'
    LOOP
        day_start := (extract(epoch FROM to_date(substr(part.relname, length('measurements_p') + 1), 'YYYYMMDD')::timestamp
                                         AT TIME ZONE 'UTC') * 1000000)::bigint;
        EXECUTE format('CREATE TABLE %I PARTITION OF measurement_chunks FOR VALUES FROM (%s) TO (%s) WITH (toast_tuple_target = 128)',
                       'measurement_chunks_p' || substr(part.relname, length('measurements_p') + 1),
                       day_start, day_start + 86400000000);
    END LOOP;
END
$$;

INSERT INTO measurement_chunks (fleet_id, vehicle_id, first_us, last_us, count, time_us, kind, message_key, received_us,
                                v0, v1, v2, flags, outcome, nis, track_reset, w0, w1)
SELECT j.fleet_id, j.vehicle_id, min(j.time_us), max(j.time_us), count(*)::integer,
       array_agg(j.time_us ORDER BY j.time_us, j.kind, j.message_key),
       array_agg(j.kind ORDER BY j.time_us, j.kind, j.message_key),
       array_agg(j.message_key ORDER BY j.time_us, j.kind, j.message_key),
       array_agg((extract(epoch FROM (j.received_at - timestamptz '1970-01-01 00:00:00+00')) * 1000000)::bigint
                 ORDER BY j.time_us, j.kind, j.message_key),
       array_agg(j.v0 ORDER BY j.time_us, j.kind, j.message_key),
       array_agg(j.v1 ORDER BY j.time_us, j.kind, j.message_key),
       array_agg(j.v2 ORDER BY j.time_us, j.kind, j.message_key),
       array_agg(j.flags ORDER BY j.time_us, j.kind, j.message_key),
       array_agg(j.outcome ORDER BY j.time_us, j.kind, j.message_key),
       array_agg(j.nis ORDER BY j.time_us, j.kind, j.message_key),
       array_agg(j.track_reset ORDER BY j.time_us, j.kind, j.message_key),
       array_agg(j.w0 ORDER BY j.time_us, j.kind, j.message_key),
       array_agg(j.w1 ORDER BY j.time_us, j.kind, j.message_key)
FROM (
    SELECT m.fleet_id, m.vehicle_id, m.kind, m.time_us, m.message_key, m.received_at, m.v0, m.v1, m.v2, m.flags,
           coalesce(v.outcome, m.outcome) AS outcome,
           CASE WHEN v.outcome IS NULL THEN m.nis ELSE v.nis END AS nis,
           coalesce(v.track_reset, m.track_reset) AS track_reset,
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
) j
GROUP BY j.fleet_id, j.vehicle_id, j.time_us / 600000000;

DROP FUNCTION judged_measurements(uuid, text, bigint, bigint, timestamptz, timestamptz);
DROP TABLE measurement_verdicts;
DROP TABLE measurements;

-- measurements: the chunks as one row per measurement, with the columns the table of that name had (and the whitened
-- innovation), for SQL by hand and for tests. It reads every chunk it is not told to skip: the service's own reads go
-- through judged_measurements(...) or read the chunks, which use the chunk key and the partitions.
CREATE VIEW measurements AS
SELECT c.fleet_id, c.vehicle_id, u.kind, u.time_us,
       timestamptz '1970-01-01 00:00:00+00' + u.time_us * interval '1 microsecond' AS measured_at,
       u.message_key,
       timestamptz '1970-01-01 00:00:00+00' + u.received_us * interval '1 microsecond' AS received_at,
       u.v0, u.v1, u.v2, u.flags, u.outcome, u.nis, u.track_reset, u.w0, u.w1
FROM measurement_chunks c
CROSS JOIN LATERAL unnest(c.time_us, c.kind, c.message_key, c.received_us, c.v0, c.v1, c.v2, c.flags, c.outcome,
                          c.nis, c.track_reset, c.w0, c.w1)
    AS u(time_us, kind, message_key, received_us, v0, v1, v2, flags, outcome, nis, track_reset, w0, w1);
COMMENT ON VIEW measurements IS 'One row per stored measurement with its newest verdict, unpacked from measurement_chunks.';

-- One vehicle's measurements in [from_us, to_us) of measurement time, each with its newest verdict: the same name,
-- arguments and result as before (p_from_at and p_to_at are no longer needed and are ignored). One SQL statement, so
-- PostgreSQL inlines it into the calling query; the chunk range uses the primary key and prunes the daily partitions.
CREATE FUNCTION judged_measurements(
    p_fleet_id uuid, p_vehicle_id text, p_from_us bigint, p_to_us bigint, p_from_at timestamptz, p_to_at timestamptz)
RETURNS TABLE (
    fleet_id uuid, vehicle_id text, kind smallint, time_us bigint, measured_at timestamptz, message_key bigint,
    received_at timestamptz, v0 double precision, v1 double precision, v2 double precision, flags integer,
    outcome smallint, nis double precision, track_reset boolean, w0 real, w1 real)
LANGUAGE sql STABLE AS $$
    SELECT c.fleet_id, c.vehicle_id, u.kind, u.time_us,
           timestamptz '1970-01-01 00:00:00+00' + u.time_us * interval '1 microsecond',
           u.message_key,
           timestamptz '1970-01-01 00:00:00+00' + u.received_us * interval '1 microsecond',
           u.v0, u.v1, u.v2, u.flags, u.outcome, u.nis, u.track_reset, u.w0, u.w1
    FROM measurement_chunks c
    CROSS JOIN LATERAL unnest(c.time_us, c.kind, c.message_key, c.received_us, c.v0, c.v1, c.v2, c.flags, c.outcome,
                              c.nis, c.track_reset, c.w0, c.w1)
        AS u(time_us, kind, message_key, received_us, v0, v1, v2, flags, outcome, nis, track_reset, w0, w1)
    WHERE c.fleet_id = p_fleet_id AND c.vehicle_id = p_vehicle_id
      AND c.first_us > p_from_us - 600000000 AND c.first_us < p_to_us AND c.last_us >= p_from_us
      AND u.time_us >= p_from_us AND u.time_us < p_to_us
$$;
COMMENT ON FUNCTION judged_measurements(uuid, text, bigint, bigint, timestamptz, timestamptz) IS
    'One vehicle''s measurements in a time range, each with its newest verdict, unpacked from measurement_chunks.';

-- 0001_initial: tenants, API keys, vehicles, the measurement log, fused states, filter checkpoints and alerts.
--
-- Every name is unqualified: MigrationRunner sets search_path to the target schema, so the same file builds
-- the store in any schema (one per test, one per installation).
--
-- Time: every event carries time_us, Unix time in microseconds (UTC, leap seconds not counted), the key the
-- filter orders by; the partitioned tables also carry the same instant as measured_at (timestamptz, microsecond
-- resolution) because PostgreSQL partitions by a real column, and a CHECK keeps the two equal.
--
-- The two high-volume tables (measurements, fused_states) have no foreign keys: a per-row key check would slow
-- the bulk COPY path, and rows are removed by dropping whole daily partitions. Low-volume tables reference
-- fleets and are removed with their fleet (ON DELETE CASCADE).

-- fleets: one customer's set of vehicles; the unit of tenancy. Every other row belongs to exactly one fleet and
-- every API key is bound to one fleet, so a request can only ever see its own fleet's data.
CREATE TABLE fleets (
    fleet_id   uuid        PRIMARY KEY,
    name       text        NOT NULL UNIQUE CHECK (length(btrim(name)) BETWEEN 1 AND 200),
    created_at timestamptz NOT NULL DEFAULT now()
);
COMMENT ON TABLE fleets IS 'Tenants: one customer''s set of vehicles. Every other row belongs to one fleet.';

-- api_keys: credentials for the HTTP API. Only the SHA-256 hash of the secret is stored; the plaintext is shown
-- once at creation. A key has exactly one role: ingest (send measurements), read (query states) or admin
-- (manage the fleet's keys and vehicles). Revocation sets revoked_at; the row stays for the audit trail.
CREATE TABLE api_keys (
    key_id     uuid        PRIMARY KEY,
    fleet_id   uuid        NOT NULL REFERENCES fleets (fleet_id) ON DELETE CASCADE,
    role       text        NOT NULL CHECK (role IN ('ingest', 'read', 'admin')),
    key_hash   bytea       NOT NULL UNIQUE CHECK (octet_length(key_hash) = 32),
    label      text        NOT NULL DEFAULT '',
    created_at timestamptz NOT NULL DEFAULT now(),
    revoked_at timestamptz NULL CHECK (revoked_at >= created_at)
);
CREATE INDEX api_keys_fleet_idx ON api_keys (fleet_id);
COMMENT ON TABLE api_keys IS 'API credentials: SHA-256 of the secret (never the secret), role, revocation time.';
COMMENT ON COLUMN api_keys.key_hash IS 'SHA-256 of the UTF-8 secret string, 32 bytes.';

-- vehicles: the tracked vehicles of a fleet. profile names the motion and noise model the filter uses
-- (delivery_van unless set). The anchor is the origin of the vehicle's local east-north-up frame; it is null
-- until the first position fix sets it, and both coordinates are set together.
CREATE TABLE vehicles (
    fleet_id       uuid             NOT NULL REFERENCES fleets (fleet_id) ON DELETE CASCADE,
    vehicle_id     text             NOT NULL CHECK (length(vehicle_id) BETWEEN 1 AND 128),
    profile        text             NOT NULL DEFAULT 'delivery_van',
    anchor_lat_deg double precision NULL CHECK (anchor_lat_deg BETWEEN -90 AND 90),
    anchor_lon_deg double precision NULL CHECK (anchor_lon_deg BETWEEN -180 AND 180),
    created_at     timestamptz      NOT NULL DEFAULT now(),
    PRIMARY KEY (fleet_id, vehicle_id),
    CHECK ((anchor_lat_deg IS NULL) = (anchor_lon_deg IS NULL))
);
COMMENT ON TABLE vehicles IS 'Tracked vehicles: filter profile and the WGS-84 origin of the local ENU frame (degrees).';

-- measurements: every accepted sensor message, with what the filter did with it. kind is the sensor kind code
-- of the ingest layer (GNSS fix, wheel speed, IMU, ...); v0..v2 are its values in that kind's units (v1 and v2
-- null when the kind has fewer values). message_key tells apart different messages of one vehicle, kind and
-- instant (a redelivery of the same message carries the same key and is rejected by the primary key).
-- outcome: 0 accepted, 1 gated (innovation outside the gate), 2 too_late (older than the replay window),
-- 3 duplicate, 4 pending (stored, not yet processed). nis is the normalised innovation squared when the
-- measurement reached the update step. track_reset marks the message that restarted the track.
-- Daily range partitions on measured_at (UTC days), created and dropped by PartitionMaintainer. The primary key
-- leads with (fleet_id, vehicle_id, time_us) so it also serves the time-range read of one vehicle.
CREATE TABLE measurements (
    fleet_id    uuid             NOT NULL,
    vehicle_id  text             NOT NULL,
    kind        smallint         NOT NULL CHECK (kind >= 0),
    time_us     bigint           NOT NULL,
    measured_at timestamptz      NOT NULL,
    message_key bigint           NOT NULL,
    received_at timestamptz      NOT NULL,
    v0          double precision NOT NULL,
    v1          double precision NULL,
    v2          double precision NULL,
    flags       integer          NOT NULL DEFAULT 0,
    outcome     smallint         NOT NULL CHECK (outcome BETWEEN 0 AND 4),
    nis         double precision NULL CHECK (nis >= 0),
    track_reset boolean          NOT NULL DEFAULT false,
    CONSTRAINT measurements_time_consistent
        CHECK ((extract(epoch FROM (measured_at - timestamptz '1970-01-01 00:00:00+00')) * 1000000)::bigint = time_us),
    PRIMARY KEY (fleet_id, vehicle_id, time_us, kind, message_key, measured_at)
) PARTITION BY RANGE (measured_at);
COMMENT ON TABLE measurements IS 'Every accepted sensor message and the filter''s verdict; daily partitions on measured_at (UTC).';
COMMENT ON COLUMN measurements.time_us IS 'Measurement time, Unix microseconds (UTC).';
COMMENT ON COLUMN measurements.measured_at IS 'The same instant as time_us; the partition key.';
COMMENT ON COLUMN measurements.outcome IS '0 accepted, 1 gated, 2 too_late, 3 duplicate, 4 pending.';
COMMENT ON COLUMN measurements.nis IS 'Normalised innovation squared, dimensionless; null when no update was attempted.';

-- fused_states: the filter's estimate after each processed measurement (or at each reporting instant): WGS-84
-- position, heading, speed, yaw rate, longitudinal acceleration, gyro bias and wheel-speed scale factor, the
-- 8x8 state covariance packed as its upper triangle in row-major order (36 values, in the units and order of
-- the estimation core's state vector), and the horizontal error ellipse (semi-axes in metres, orientation of
-- the major axis in radians). Angle conventions and the ellipse's confidence level are the estimation core's.
-- Daily partitions like measurements.
CREATE TABLE fused_states (
    fleet_id                uuid               NOT NULL,
    vehicle_id              text               NOT NULL,
    time_us                 bigint             NOT NULL,
    measured_at             timestamptz        NOT NULL,
    lat_deg                 double precision   NOT NULL CHECK (lat_deg BETWEEN -90 AND 90),
    lon_deg                 double precision   NOT NULL CHECK (lon_deg BETWEEN -180 AND 180),
    heading_rad             double precision   NOT NULL,
    speed_mps               double precision   NOT NULL,
    yaw_rate_rps            double precision   NOT NULL,
    accel_mps2              double precision   NOT NULL,
    gyro_bias_rps           double precision   NOT NULL,
    wheel_scale             double precision   NOT NULL,
    covariance              double precision[] NOT NULL
        CHECK (array_ndims(covariance) = 1 AND cardinality(covariance) = 36),
    ellipse_major_m         double precision   NOT NULL CHECK (ellipse_major_m >= 0),
    ellipse_minor_m         double precision   NOT NULL CHECK (ellipse_minor_m >= 0),
    ellipse_orientation_rad double precision   NOT NULL,
    CONSTRAINT fused_states_ellipse_axes_ordered CHECK (ellipse_minor_m <= ellipse_major_m),
    CONSTRAINT fused_states_time_consistent
        CHECK ((extract(epoch FROM (measured_at - timestamptz '1970-01-01 00:00:00+00')) * 1000000)::bigint = time_us),
    PRIMARY KEY (fleet_id, vehicle_id, time_us, measured_at)
) PARTITION BY RANGE (measured_at);
COMMENT ON TABLE fused_states IS 'Filter estimates over time; daily partitions on measured_at (UTC).';
COMMENT ON COLUMN fused_states.covariance IS 'Upper triangle of the 8x8 state covariance, row-major, 36 values.';

-- filter_checkpoints: serialised filter state at chosen instants, the restart points for re-processing when a
-- measurement arrives out of sequence (replay from the newest checkpoint before it) and after a restart.
-- payload is the estimation core's own serialisation; payload_version names its format so an incompatible
-- checkpoint is recognised and skipped instead of misread. The anchor is the ENU origin the payload refers to.
CREATE TABLE filter_checkpoints (
    fleet_id        uuid             NOT NULL REFERENCES fleets (fleet_id) ON DELETE CASCADE,
    vehicle_id      text             NOT NULL,
    time_us         bigint           NOT NULL,
    created_at      timestamptz      NOT NULL DEFAULT now(),
    anchor_lat_deg  double precision NOT NULL CHECK (anchor_lat_deg BETWEEN -90 AND 90),
    anchor_lon_deg  double precision NOT NULL CHECK (anchor_lon_deg BETWEEN -180 AND 180),
    payload_version smallint         NOT NULL,
    payload         bytea            NOT NULL,
    PRIMARY KEY (fleet_id, vehicle_id, time_us)
);
COMMENT ON TABLE filter_checkpoints IS 'Serialised filter state per vehicle and instant (time_us, Unix microseconds).';

-- alerts: conditions raised about a vehicle (or, with vehicle_id null, about the whole fleet), e.g. a stale
-- track or a run of gated fixes. Lifecycle open -> acknowledged -> resolved; ended_at is set when the condition
-- ends and is required once resolved. At most one unresolved alert per fleet, vehicle and kind, so a condition
-- that persists updates its alert instead of adding one per evaluation. details holds kind-specific values.
CREATE TABLE alerts (
    alert_id   uuid        PRIMARY KEY,
    fleet_id   uuid        NOT NULL REFERENCES fleets (fleet_id) ON DELETE CASCADE,
    vehicle_id text        NULL,
    kind       text        NOT NULL CHECK (length(kind) BETWEEN 1 AND 64),
    severity   text        NOT NULL CHECK (severity IN ('info', 'warning', 'critical')),
    state      text        NOT NULL DEFAULT 'open' CHECK (state IN ('open', 'acknowledged', 'resolved')),
    started_at timestamptz NOT NULL,
    ended_at   timestamptz NULL CHECK (ended_at >= started_at),
    details    jsonb       NOT NULL DEFAULT '{}'::jsonb,
    created_at timestamptz NOT NULL DEFAULT now(),
    updated_at timestamptz NOT NULL DEFAULT now(),
    CHECK (state <> 'resolved' OR ended_at IS NOT NULL)
);
CREATE INDEX alerts_fleet_vehicle_started_idx ON alerts (fleet_id, vehicle_id, started_at DESC);
CREATE INDEX alerts_fleet_unresolved_idx ON alerts (fleet_id, started_at DESC) WHERE state <> 'resolved';
CREATE UNIQUE INDEX alerts_one_unresolved_per_kind ON alerts (fleet_id, vehicle_id, kind) NULLS NOT DISTINCT
    WHERE state <> 'resolved';
COMMENT ON TABLE alerts IS 'Raised conditions per vehicle or fleet; open -> acknowledged -> resolved.';

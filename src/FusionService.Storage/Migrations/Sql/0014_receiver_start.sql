-- 0014_receiver_start: a new vehicle's GNSS receiver fit starts from what its fleet's other receivers fitted.
--
-- vehicle_receiver_fits: each vehicle's newest receiver fit (correlated share and time constant of its GNSS error,
-- fitted while it stood; docs/estimation.md) and how much of its own evidence it holds, kept beside its checkpoints.
CREATE TABLE vehicle_receiver_fits (
    fleet_id        uuid             NOT NULL REFERENCES fleets (fleet_id) ON DELETE CASCADE,
    vehicle_id      text             NOT NULL,
    share           double precision NOT NULL CHECK (share > 0 AND share < 1),
    time_constant_s double precision NOT NULL CHECK (time_constant_s > 0),
    long_lag_terms  double precision NOT NULL CHECK (long_lag_terms >= 0),
    updated_at      timestamptz      NOT NULL DEFAULT now(),
    PRIMARY KEY (fleet_id, vehicle_id)
);
COMMENT ON TABLE vehicle_receiver_fits IS 'Newest GNSS receiver fit per vehicle (share, time constant, own long-lag terms), kept with the checkpoints.';

-- vehicles.gnss_start_*: the pair a vehicle's track started its receiver fit from, decided once, before its first
-- measurement is filtered (the median of its fleet's fits, or null: the configured pair), so that every replay from the
-- vehicle's first measurement starts where the live track did. Vehicles stored before this migration started from the
-- configured pair.
ALTER TABLE vehicles ADD COLUMN gnss_start_decided boolean NOT NULL DEFAULT false;
ALTER TABLE vehicles ADD COLUMN gnss_start_share double precision NULL CHECK (gnss_start_share > 0 AND gnss_start_share < 1);
ALTER TABLE vehicles ADD COLUMN gnss_start_time_constant_s double precision NULL CHECK (gnss_start_time_constant_s > 0);
ALTER TABLE vehicles ADD CONSTRAINT vehicles_gnss_start_pair CHECK (
    (gnss_start_share IS NULL) = (gnss_start_time_constant_s IS NULL) AND (gnss_start_decided OR gnss_start_share IS NULL));
UPDATE vehicles SET gnss_start_decided = true;
COMMENT ON COLUMN vehicles.gnss_start_share IS 'Correlated share the receiver fit started from; null = the configured one.';
COMMENT ON COLUMN vehicles.gnss_start_time_constant_s IS 'Time constant (s) the receiver fit started from; null = the configured one.';

-- 0012_vehicle_latest: the newest estimate and the newest receipt per sensor of every vehicle, kept by the write path,
-- so that the fleet list (GET /v1/vehicles) reads one row per vehicle instead of every fused state over the retention
-- window.

-- vehicle_latest_states: the newest stored fused state of each vehicle (the row of fused_states with the greatest
-- time_us). Written in the same transaction as the fused states (FusedStateUpserter); a re-processed older instant
-- never replaces a newer one. No foreign key, like fused_states: the fused-state write must never fail on one.
CREATE TABLE vehicle_latest_states (
    fleet_id                uuid             NOT NULL,
    vehicle_id              text             NOT NULL,
    time_us                 bigint           NOT NULL,
    lat_deg                 double precision NOT NULL,
    lon_deg                 double precision NOT NULL,
    heading_rad             double precision NOT NULL,
    speed_mps               double precision NOT NULL,
    ellipse_major_m         double precision NOT NULL,
    ellipse_minor_m         double precision NOT NULL,
    ellipse_orientation_rad double precision NOT NULL,
    updated_at              timestamptz      NOT NULL DEFAULT now(),
    PRIMARY KEY (fleet_id, vehicle_id)
);
COMMENT ON TABLE vehicle_latest_states IS 'Newest fused state per vehicle, kept by the fused-state writer (one row per vehicle).';

-- vehicle_receipts: when the service last received a measurement of each sensor kind from each vehicle (server
-- clock) and the newest measurement time among them. Written in the ingest transaction (MeasurementIngest).
CREATE TABLE vehicle_receipts (
    fleet_id         uuid        NOT NULL REFERENCES fleets (fleet_id) ON DELETE CASCADE,
    vehicle_id       text        NOT NULL,
    kind             smallint    NOT NULL,
    last_received_at timestamptz NOT NULL,
    last_measured_at timestamptz NOT NULL,
    PRIMARY KEY (fleet_id, vehicle_id, kind)
);
COMMENT ON TABLE vehicle_receipts IS 'Newest receipt (server clock) and measurement time per vehicle and sensor kind.';

-- Filled once from what is stored already.
INSERT INTO vehicle_latest_states (fleet_id, vehicle_id, time_us, lat_deg, lon_deg, heading_rad, speed_mps,
                                   ellipse_major_m, ellipse_minor_m, ellipse_orientation_rad)
SELECT DISTINCT ON (f.fleet_id, f.vehicle_id) f.fleet_id, f.vehicle_id, f.time_us, f.lat_deg, f.lon_deg, f.heading_rad,
       f.speed_mps, f.ellipse_major_m, f.ellipse_minor_m, f.ellipse_orientation_rad
FROM fused_states f
ORDER BY f.fleet_id, f.vehicle_id, f.time_us DESC;

INSERT INTO vehicle_receipts (fleet_id, vehicle_id, kind, last_received_at, last_measured_at)
SELECT m.fleet_id, m.vehicle_id, m.kind, max(m.received_at), max(m.measured_at)
FROM measurements m JOIN fleets USING (fleet_id)
GROUP BY m.fleet_id, m.vehicle_id, m.kind;

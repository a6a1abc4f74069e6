-- 0004_audit: duplicate deliveries, which the measurement log does not keep (a redelivered message is dropped by
-- its primary key), are counted per fleet, vehicle, sensor kind and UTC day of the measurement time, so the
-- diagnostics can say how often a vehicle's uploads repeat themselves. kind is the sensor kind code of the
-- measurements table; count only grows. Removed with the fleet.
CREATE TABLE duplicate_counts (
    fleet_id   uuid     NOT NULL REFERENCES fleets (fleet_id) ON DELETE CASCADE,
    vehicle_id text     NOT NULL CHECK (length(vehicle_id) BETWEEN 1 AND 128),
    kind       smallint NOT NULL CHECK (kind >= 0),
    day        date     NOT NULL,
    count      bigint   NOT NULL CHECK (count >= 0),
    PRIMARY KEY (fleet_id, vehicle_id, kind, day)
);
COMMENT ON TABLE duplicate_counts IS 'Duplicate deliveries per fleet, vehicle, sensor kind and UTC day of the measurement time.';

-- 0011_tenant_limits: a per-fleet vehicle quota and optional expiry of API keys.
--
-- fleets.max_vehicles: how many distinct vehicles the fleet may have; null means the service's configured default
-- (Tenancy:DefaultMaxVehicles). Set by an admin key (PUT /v1/fleet/quota) or the keys command.
ALTER TABLE fleets ADD COLUMN max_vehicles integer NULL CHECK (max_vehicles BETWEEN 1 AND 10000000);
COMMENT ON COLUMN fleets.max_vehicles IS 'Vehicle quota of the fleet; null = the service default (Tenancy:DefaultMaxVehicles).';

-- api_keys.expires_at: the key stops resolving at this instant; null = never expires. Open streams of the key are
-- closed when it expires or is revoked.
ALTER TABLE api_keys ADD COLUMN expires_at timestamptz NULL;
ALTER TABLE api_keys ADD CONSTRAINT api_keys_expiry_after_creation CHECK (expires_at IS NULL OR expires_at > created_at);
COMMENT ON COLUMN api_keys.expires_at IS 'When the key stops being accepted; null = no expiry.';

-- 0009_webhook_safety: webhook secrets encrypted at rest, dead letters, a shared Data Protection key ring, and who
-- acknowledged an alert.
--
-- webhooks.secret_protected holds the signing secret encrypted with ASP.NET Core Data Protection (an opaque string
-- only the service's key ring can decrypt). The plaintext column stays nullable for rows written before this
-- migration: the service encrypts them on start and clears secret.
ALTER TABLE webhooks ADD COLUMN secret_protected text NULL;
ALTER TABLE webhooks ALTER COLUMN secret DROP NOT NULL;
ALTER TABLE webhooks ADD CONSTRAINT webhooks_secret_present CHECK (secret IS NOT NULL OR secret_protected IS NOT NULL);
COMMENT ON COLUMN webhooks.secret IS 'Plaintext secret of rows written before 0009 only; cleared once encrypted into secret_protected.';
COMMENT ON COLUMN webhooks.secret_protected IS 'Signing secret encrypted with ASP.NET Core Data Protection (purpose FusionService.Webhooks.Secret.v1).';

-- A delivery that failed its last allowed attempt is dead-lettered: never claimed again until re-queued by the API.
ALTER TABLE webhook_outbox ADD COLUMN dead_lettered_at timestamptz NULL;
DROP INDEX webhook_outbox_due_idx;
CREATE INDEX webhook_outbox_due_idx ON webhook_outbox (next_attempt_at) WHERE delivered_at IS NULL AND dead_lettered_at IS NULL;
CREATE INDEX webhook_outbox_dead_idx ON webhook_outbox (webhook_id, dead_lettered_at) WHERE dead_lettered_at IS NOT NULL;
CREATE INDEX webhook_outbox_created_idx ON webhook_outbox (created_at);
COMMENT ON COLUMN webhook_outbox.dead_lettered_at IS 'When the last allowed attempt failed; null while pending or delivered.';

-- data_protection_keys: the ASP.NET Core Data Protection key ring (one XML element per key), shared by every process
-- on this database so that each can decrypt the secrets another encrypted.
CREATE TABLE data_protection_keys (
    friendly_name text        PRIMARY KEY,
    xml           text        NOT NULL,
    created_at    timestamptz NOT NULL DEFAULT now()
);
COMMENT ON TABLE data_protection_keys IS 'ASP.NET Core Data Protection key ring (XML elements) shared by the service processes.';

-- Who acknowledged an alert and when (the key's id and label at that moment).
ALTER TABLE alerts ADD COLUMN acknowledged_at timestamptz NULL;
ALTER TABLE alerts ADD COLUMN acknowledged_by_key_id uuid NULL;
ALTER TABLE alerts ADD COLUMN acknowledged_by_label text NULL;
COMMENT ON COLUMN alerts.acknowledged_by_key_id IS 'API key that acknowledged the alert (api_keys.key_id; kept if the key is revoked).';

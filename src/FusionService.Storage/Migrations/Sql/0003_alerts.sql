-- 0003_alerts: alert counts and summaries, per-fleet alert rule settings, webhook subscriptions and the durable
-- webhook outbox.
--
-- alerts gains count (how many occurrences the alert groups: gated measurements of a burst, track resets, ...) and
-- summary (one plain sentence). An alert is written in the same transaction as its outbox rows, one per webhook
-- subscription of the fleet, so a committed alert is never without its deliveries and vice versa.
ALTER TABLE alerts ADD COLUMN count integer NOT NULL DEFAULT 1 CHECK (count >= 1);
ALTER TABLE alerts ADD COLUMN summary text NOT NULL DEFAULT '';
ALTER TABLE alerts ADD COLUMN last_seen_at timestamptz NULL;
COMMENT ON COLUMN alerts.count IS 'Occurrences grouped into this alert (at least 1).';
COMMENT ON COLUMN alerts.last_seen_at IS 'Newest instant (data time) at which the condition held; repeated evaluation never moves it back.';
COMMENT ON COLUMN alerts.details IS 'The numbers behind the alert, kind-specific (snake_case keys, SI units in the key names).';

-- alert_rules: the fleet's thresholds as one JSON document (the service's AlertRuleSettings, snake_case); a fleet
-- without a row uses the documented defaults.
CREATE TABLE alert_rules (
    fleet_id   uuid        PRIMARY KEY REFERENCES fleets (fleet_id) ON DELETE CASCADE,
    settings   jsonb       NOT NULL,
    updated_at timestamptz NOT NULL DEFAULT now()
);
COMMENT ON TABLE alert_rules IS 'Per-fleet alert thresholds (JSON); defaults apply without a row.';

-- webhooks: where a fleet wants its alerts POSTed. The secret is stored as given because every delivery is signed
-- with it (HMAC-SHA256); it is never returned by the API after creation.
CREATE TABLE webhooks (
    webhook_id uuid        PRIMARY KEY,
    fleet_id   uuid        NOT NULL REFERENCES fleets (fleet_id) ON DELETE CASCADE,
    url        text        NOT NULL CHECK (length(url) BETWEEN 8 AND 2000),
    secret     text        NOT NULL CHECK (length(secret) BETWEEN 16 AND 200),
    created_at timestamptz NOT NULL DEFAULT now()
);
CREATE INDEX webhooks_fleet_idx ON webhooks (fleet_id);
COMMENT ON TABLE webhooks IS 'Webhook subscriptions per fleet; secret signs deliveries (HMAC-SHA256).';

-- webhook_outbox: one row per (alert event, subscription). The dispatcher claims due rows with
-- FOR UPDATE SKIP LOCKED, pushes next_attempt_at forward by a lease while it sends (so a crash mid-send retries
-- after the lease), then marks the row delivered or reschedules it with back-off, recording attempts and the last
-- error. payload is the exact JSON body that is signed and sent. Deleting a subscription drops its pending rows.
CREATE TABLE webhook_outbox (
    delivery_id     uuid        PRIMARY KEY,
    webhook_id      uuid        NOT NULL REFERENCES webhooks (webhook_id) ON DELETE CASCADE,
    fleet_id        uuid        NOT NULL REFERENCES fleets (fleet_id) ON DELETE CASCADE,
    alert_id        uuid        NOT NULL REFERENCES alerts (alert_id) ON DELETE CASCADE,
    payload         text        NOT NULL,
    created_at      timestamptz NOT NULL DEFAULT now(),
    next_attempt_at timestamptz NOT NULL DEFAULT now(),
    attempts        integer     NOT NULL DEFAULT 0 CHECK (attempts >= 0),
    last_error      text        NULL,
    delivered_at    timestamptz NULL
);
CREATE INDEX webhook_outbox_due_idx ON webhook_outbox (next_attempt_at) WHERE delivered_at IS NULL;
CREATE INDEX webhook_outbox_alert_idx ON webhook_outbox (alert_id);
COMMENT ON TABLE webhook_outbox IS 'Durable webhook deliveries: due time, attempts, last error, delivery time.';

-- Alarm events for the MQTT broker, written in the same transaction as the alarm change they report.
-- event_no is the per-site event number consumers use to detect a gap: AUTOINCREMENT never reuses a
-- number, even after sent rows are pruned. A row is only ever marked sent, in event_no order.
CREATE TABLE mqtt_outbox (
  event_no     INTEGER PRIMARY KEY AUTOINCREMENT,
  payload_json TEXT    NOT NULL,
  created_at   TEXT    NOT NULL,
  sent_at      TEXT
);
CREATE INDEX mqtt_outbox_pending ON mqtt_outbox (event_no) WHERE sent_at IS NULL;

-- pairwatch core schema. Times: *_at columns are ISO 8601 UTC text (e.g. 2026-12-01T20:03:07.123Z);
-- *_us columns are unwrapped decoder microseconds (monotonic per decoder session).

CREATE TABLE decoder_sessions (
  id              INTEGER PRIMARY KEY,
  decoder_id      TEXT    NOT NULL,
  connected_at    TEXT    NOT NULL,
  hello_at        TEXT,
  firmware        TEXT,
  loops           INTEGER,
  disconnected_at TEXT,
  disconnect_reason TEXT,
  frames          INTEGER NOT NULL DEFAULT 0,
  bad_frames      INTEGER NOT NULL DEFAULT 0,
  lost_frames     INTEGER NOT NULL DEFAULT 0
);
CREATE INDEX decoder_sessions_by_decoder ON decoder_sessions (decoder_id, connected_at);

-- Current state of each configured loop (one row per loop id); history lives in state_changes.
CREATE TABLE loop_status (
  loop_id         TEXT PRIMARY KEY,
  state           TEXT NOT NULL DEFAULT 'unknown',
  since_at        TEXT NOT NULL,
  last_pulse_at   TEXT,
  in_service      INTEGER NOT NULL DEFAULT 1,
  service_note    TEXT,
  service_by      TEXT,
  service_at      TEXT
);

CREATE TABLE state_changes (
  id          INTEGER PRIMARY KEY,
  loop_id     TEXT    NOT NULL,
  from_state  TEXT    NOT NULL,
  to_state    TEXT    NOT NULL,
  decoder_us  INTEGER,
  at          TEXT    NOT NULL,
  reason      TEXT    NOT NULL
);
CREATE INDEX state_changes_by_loop ON state_changes (loop_id, at);
CREATE INDEX state_changes_by_time ON state_changes (at);

-- Line quality per loop per bucket; resolution 'minute' rows are folded into 'hour' rows by retention.
CREATE TABLE line_quality (
  loop_id            TEXT    NOT NULL,
  resolution         TEXT    NOT NULL CHECK (resolution IN ('minute', 'hour')),
  bucket_at          TEXT    NOT NULL,
  pulses             INTEGER NOT NULL,
  interval_count     INTEGER NOT NULL,
  interval_sum_ms    REAL    NOT NULL,
  interval_sq_sum_ms REAL    NOT NULL,
  out_of_tolerance   INTEGER NOT NULL,
  glitches           INTEGER NOT NULL,
  long_pulses        INTEGER NOT NULL,
  lost_frames        INTEGER NOT NULL,
  PRIMARY KEY (loop_id, resolution, bucket_at)
) WITHOUT ROWID;

-- Raw band changes, kept as a bounded ring by age (retention.edges).
CREATE TABLE edges (
  id          INTEGER PRIMARY KEY,
  decoder_id  TEXT    NOT NULL,
  input       INTEGER NOT NULL,
  band        TEXT    NOT NULL,
  decoder_us  INTEGER NOT NULL,
  at          TEXT    NOT NULL
);
CREATE INDEX edges_by_time ON edges (at);

-- Alarms and trouble. source is the loop id, decoder id or 'system' the condition belongs to.
CREATE TABLE alarms (
  id              INTEGER PRIMARY KEY,
  source          TEXT    NOT NULL,
  loop_id         TEXT,
  condition       TEXT    NOT NULL,
  priority        TEXT    NOT NULL CHECK (priority IN ('alarm', 'trouble', 'system')),
  state           TEXT    NOT NULL,
  active          INTEGER NOT NULL DEFAULT 1,
  latched         INTEGER NOT NULL DEFAULT 0,
  policy          TEXT,
  raised_at       TEXT    NOT NULL,
  cleared_at      TEXT,
  acked_at        TEXT,
  acked_by        TEXT,
  note            TEXT,
  shelved_until   TEXT,
  shelve_reason   TEXT,
  closed_at       TEXT,
  -- escalation bookkeeping, owned by the pure escalation planner
  escalation_json TEXT    NOT NULL DEFAULT '{}',
  thread_message_id TEXT
);
CREATE INDEX alarms_open ON alarms (closed_at, priority);
CREATE INDEX alarms_by_source ON alarms (source, condition, closed_at);

-- The audit trail: every action on an alarm or a loop. Never deleted.
CREATE TABLE audit (
  id        INTEGER PRIMARY KEY,
  at        TEXT NOT NULL,
  actor     TEXT NOT NULL,
  action    TEXT NOT NULL,
  alarm_id  INTEGER REFERENCES alarms (id),
  loop_id   TEXT,
  note      TEXT
);
CREATE INDEX audit_by_alarm ON audit (alarm_id);
CREATE INDEX audit_by_time ON audit (at);

-- Who has been told about an alarm, and when first (for repeats, ack and clear notices).
CREATE TABLE alarm_recipients (
  alarm_id         INTEGER NOT NULL REFERENCES alarms (id),
  contact_id       TEXT    NOT NULL,
  first_queued_at  TEXT    NOT NULL,
  PRIMARY KEY (alarm_id, contact_id)
) WITHOUT ROWID;

-- Transactional outbox: a message is a row before anything tries to send it.
CREATE TABLE outbox (
  id              INTEGER PRIMARY KEY,
  message_id      TEXT    NOT NULL UNIQUE,
  kind            TEXT    NOT NULL,
  priority        TEXT,
  recipients_json TEXT    NOT NULL,
  subject         TEXT    NOT NULL,
  text_body       TEXT    NOT NULL,
  html_body       TEXT    NOT NULL,
  headers_json    TEXT    NOT NULL DEFAULT '{}',
  alarm_ids_json  TEXT    NOT NULL DEFAULT '[]',
  created_at      TEXT    NOT NULL,
  status          TEXT    NOT NULL DEFAULT 'pending' CHECK (status IN ('pending', 'sent')),
  attempts        INTEGER NOT NULL DEFAULT 0,
  next_attempt_at TEXT    NOT NULL,
  last_error      TEXT,
  sent_at         TEXT
);
CREATE INDEX outbox_pending ON outbox (status, next_attempt_at);

-- Notifications waiting out the storm-grouping window before they become one mail per contact.
CREATE TABLE pending_notices (
  id          INTEGER PRIMARY KEY,
  contact_id  TEXT    NOT NULL,
  alarm_id    INTEGER REFERENCES alarms (id),
  kind        TEXT    NOT NULL,
  created_at  TEXT    NOT NULL,
  due_at      TEXT    NOT NULL,
  detail_json TEXT    NOT NULL DEFAULT '{}'
);
CREATE INDEX pending_notices_due ON pending_notices (due_at);

-- Single-use acknowledge-link tokens that have been spent.
CREATE TABLE used_ack_tokens (
  token_id  TEXT PRIMARY KEY,
  used_at   TEXT NOT NULL
) WITHOUT ROWID;

CREATE TABLE users (
  id            INTEGER PRIMARY KEY,
  name          TEXT NOT NULL UNIQUE,
  role          TEXT NOT NULL CHECK (role IN ('viewer', 'operator', 'admin')),
  password_hash TEXT NOT NULL,
  password_salt TEXT NOT NULL,
  created_at    TEXT NOT NULL
);

CREATE TABLE web_sessions (
  id_hash     TEXT PRIMARY KEY,
  user_id     INTEGER NOT NULL REFERENCES users (id) ON DELETE CASCADE,
  csrf_token  TEXT    NOT NULL,
  created_at  TEXT    NOT NULL,
  expires_at  TEXT    NOT NULL
) WITHOUT ROWID;

CREATE TABLE api_tokens (
  id          INTEGER PRIMARY KEY,
  name        TEXT NOT NULL UNIQUE,
  token_hash  TEXT NOT NULL UNIQUE,
  role        TEXT NOT NULL CHECK (role IN ('viewer', 'operator', 'admin')),
  created_at  TEXT NOT NULL,
  revoked_at  TEXT
);

CREATE TABLE login_failures (
  id    INTEGER PRIMARY KEY,
  name  TEXT,
  ip    TEXT,
  at    TEXT NOT NULL
);

-- Small facts the daemon keeps between runs (last daily report, last retention run, ...).
CREATE TABLE kv (
  key   TEXT PRIMARY KEY,
  value TEXT NOT NULL
) WITHOUT ROWID;

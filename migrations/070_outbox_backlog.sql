-- The mail backlog after an outage (issue 16 item 4). The outbox is rebuilt (SQLite cannot change a
-- CHECK in place; the documented way is a new table, copy, drop, rename) to add:
--   status 'dropped': a reminder made obsolete before it could be sent; the row stays, an audit row
--                     says why, so nothing vanishes;
--   reminder:         the mail only repeats or escalates what was already said (repeat and escalation
--                     notices), so it may become obsolete;
--   refused:          the server refused this very message on its last attempt (an SMTP 5xx/4xx to it,
--                     not a link failure): it backs off on its own and holds no other mail back.
CREATE TABLE outbox_rebuilt (
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
  status          TEXT    NOT NULL DEFAULT 'pending' CHECK (status IN ('pending', 'sent', 'dropped')),
  attempts        INTEGER NOT NULL DEFAULT 0,
  next_attempt_at TEXT    NOT NULL,
  last_error      TEXT,
  sent_at         TEXT,
  reminder        INTEGER NOT NULL DEFAULT 0 CHECK (reminder IN (0, 1)),
  refused         INTEGER NOT NULL DEFAULT 0 CHECK (refused IN (0, 1))
);
INSERT INTO outbox_rebuilt (id, message_id, kind, priority, recipients_json, subject, text_body, html_body, headers_json,
  alarm_ids_json, created_at, status, attempts, next_attempt_at, last_error, sent_at)
SELECT id, message_id, kind, priority, recipients_json, subject, text_body, html_body, headers_json,
  alarm_ids_json, created_at, status, attempts, next_attempt_at, last_error, sent_at
FROM outbox;
DROP TABLE outbox;
ALTER TABLE outbox_rebuilt RENAME TO outbox;
CREATE INDEX outbox_pending ON outbox (status, next_attempt_at);

-- Reading replies to alarm mail (mail.imap). The offset says where in the mailbox the monitor has read
-- to; a UIDVALIDITY change (RFC 9051 §2.3.1.1) means the mailbox was rebuilt and UIDs start over.
CREATE TABLE inbox_offsets (
  folder        TEXT PRIMARY KEY,
  uid_validity  INTEGER NOT NULL,
  last_uid      INTEGER NOT NULL,
  updated_at    TEXT    NOT NULL
) WITHOUT ROWID;

-- Every message the monitor has decided about, by Message-ID: the same reply seen twice (a copy, a
-- resend, a rebuilt mailbox) is handled once. marked_at is set once the mailbox shows the verdict
-- (flag or move), so marking that a crash interrupted is done again at the next start.
CREATE TABLE inbox_messages (
  message_key   TEXT PRIMARY KEY,
  folder        TEXT    NOT NULL,
  uid_validity  INTEGER NOT NULL,
  uid           INTEGER NOT NULL,
  verdict       TEXT    NOT NULL,
  detail        TEXT    NOT NULL,
  handled_at    TEXT    NOT NULL,
  marked_at     TEXT
) WITHOUT ROWID;
CREATE INDEX inbox_messages_unmarked ON inbox_messages (marked_at) WHERE marked_at IS NULL;

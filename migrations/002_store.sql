-- Hourly snapshots of each decoder session's frame counters. A session can run for months, so its totals
-- alone cannot say how many frames were lost in the last 24 h; the difference of two snapshots can.
-- A row holds the session's totals as of the last counter update within that hour.
CREATE TABLE decoder_counter_marks (
  session_id  INTEGER NOT NULL REFERENCES decoder_sessions (id),
  hour_at     TEXT    NOT NULL,
  frames      INTEGER NOT NULL,
  bad_frames  INTEGER NOT NULL,
  lost_frames INTEGER NOT NULL,
  PRIMARY KEY (session_id, hour_at)
) WITHOUT ROWID;
CREATE INDEX decoder_counter_marks_by_hour ON decoder_counter_marks (hour_at);

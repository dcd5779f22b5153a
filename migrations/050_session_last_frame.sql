-- When a session last heard a valid frame, kept up to date while it is open, so a start after a crash
-- can close the dead process's session at that moment instead of leaving it open for ever.
ALTER TABLE decoder_sessions ADD COLUMN last_frame_at TEXT;

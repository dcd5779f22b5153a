-- When a browser session was last used, for the idle timeout (web.session_idle). NULL: not used since
-- sign-in (created_at counts).
ALTER TABLE web_sessions ADD COLUMN last_seen_at TEXT;

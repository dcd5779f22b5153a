import type { SqliteDatabase } from './openDatabase.js';
import { HOUR_MS, floorTo, fromIso, fromIsoOrNull, toIso } from './isoTime.js';

export interface FrameCounters {
  frames: number;
  badFrames: number;
  lostFrames: number;
}

export interface DecoderSessionRecord extends FrameCounters {
  id: number;
  decoderId: string;
  connectedAtMs: number;
  helloAtMs: number | null;
  firmware: string | null;
  loops: number | null;
  disconnectedAtMs: number | null;
  disconnectReason: string | null;
}

/** What the daily report says about a decoder over a window. */
export interface DecoderUptime extends FrameCounters {
  windowMs: number;
  /** Time within the window that a session was open (port connected). */
  connectedMs: number;
  /** Sessions overlapping the window; more than one means reconnects of the port or restarts of the monitor. */
  sessions: number;
}

export interface DecoderSessionRepo {
  open(decoderId: string, atMs: number): number;
  hello(sessionId: number, atMs: number, firmware: string, loops: number): void;
  /** Session totals so far (not increments). With `atMs`, also kept as that hour's snapshot for window counts. */
  counters(sessionId: number, counts: FrameCounters, atMs?: number): void;
  close(sessionId: number, atMs: number, reason: string): void;
  /** Notes that the session heard a valid frame at `atMs` (never moves the mark back). */
  heard(sessionId: number, atMs: number): void;
  /**
   * Closes every session a previous process left open (it was killed or lost power), at the last frame
   * it heard, else its HELLO, else its start. Returns how many were closed.
   */
  closeAbandoned(reason: string): number;
  latest(decoderId: string): DecoderSessionRecord | null;
  /** Uptime and frame counts over [sinceMs, nowMs]. */
  uptimeSince(decoderId: string, sinceMs: number, nowMs: number): DecoderUptime;
}

interface SessionRow {
  id: number;
  decoder_id: string;
  connected_at: string;
  hello_at: string | null;
  firmware: string | null;
  loops: number | null;
  disconnected_at: string | null;
  disconnect_reason: string | null;
  frames: number;
  bad_frames: number;
  lost_frames: number;
  /** When the next session of the same decoder began (null for the latest). */
  next_connected_at?: string | null;
}

interface MarkRow {
  frames: number;
  bad_frames: number;
  lost_frames: number;
}

function toRecord(row: SessionRow): DecoderSessionRecord {
  const where = `decoder_sessions[${row.id}]`;
  return {
    id: row.id,
    decoderId: row.decoder_id,
    connectedAtMs: fromIso(row.connected_at, `${where}.connected_at`),
    helloAtMs: fromIsoOrNull(row.hello_at, `${where}.hello_at`),
    firmware: row.firmware,
    loops: row.loops,
    disconnectedAtMs: fromIsoOrNull(row.disconnected_at, `${where}.disconnected_at`),
    disconnectReason: row.disconnect_reason,
    frames: row.frames,
    badFrames: row.bad_frames,
    lostFrames: row.lost_frames,
  };
}

export function createDecoderSessionRepo(db: SqliteDatabase): DecoderSessionRepo {
  const insert = db.prepare('INSERT INTO decoder_sessions (decoder_id, connected_at) VALUES (?, ?)');
  const setHello = db.prepare('UPDATE decoder_sessions SET hello_at = ?, firmware = ?, loops = ? WHERE id = ?');
  const setCounters = db.prepare('UPDATE decoder_sessions SET frames = ?, bad_frames = ?, lost_frames = ? WHERE id = ?');
  const upsertMark = db.prepare(`
    INSERT INTO decoder_counter_marks (session_id, hour_at, frames, bad_frames, lost_frames) VALUES (?, ?, ?, ?, ?)
    ON CONFLICT (session_id, hour_at) DO UPDATE SET
      frames = excluded.frames, bad_frames = excluded.bad_frames, lost_frames = excluded.lost_frames`);
  const setClosed = db.prepare('UPDATE decoder_sessions SET disconnected_at = ?, disconnect_reason = ? WHERE id = ?');
  const setHeard = db.prepare('UPDATE decoder_sessions SET last_frame_at = ? WHERE id = ? AND (last_frame_at IS NULL OR last_frame_at < ?)');
  const closeOpen = db.prepare(`
    UPDATE decoder_sessions
    SET disconnected_at = MAX(connected_at, COALESCE(last_frame_at, hello_at, connected_at)), disconnect_reason = ?
    WHERE disconnected_at IS NULL`);
  const selectLatest = db.prepare('SELECT * FROM decoder_sessions WHERE decoder_id = ? ORDER BY connected_at DESC, id DESC LIMIT 1');
  // A row still open while a later one exists was left by a process that died before closing it: one
  // port has one session at a time, so it ended no later than the next began.
  const selectOverlapping = db.prepare(`
    SELECT s.*, (
      SELECT MIN(n.connected_at) FROM decoder_sessions n
      WHERE n.decoder_id = s.decoder_id AND (n.connected_at > s.connected_at OR (n.connected_at = s.connected_at AND n.id > s.id))
    ) AS next_connected_at
    FROM decoder_sessions s
    WHERE s.decoder_id = ? AND s.connected_at < ? AND (s.disconnected_at IS NULL OR s.disconnected_at > ?)
    ORDER BY s.connected_at, s.id`);
  const selectMarkBefore = db.prepare(
    'SELECT frames, bad_frames, lost_frames FROM decoder_counter_marks WHERE session_id = ? AND hour_at <= ? ORDER BY hour_at DESC LIMIT 1',
  );

  return {
    open(decoderId, atMs) {
      return Number(insert.run(decoderId, toIso(atMs)).lastInsertRowid);
    },
    hello(sessionId, atMs, firmware, loops) {
      setHello.run(toIso(atMs), firmware, loops, sessionId);
    },
    counters(sessionId, counts, atMs) {
      setCounters.run(counts.frames, counts.badFrames, counts.lostFrames, sessionId);
      if (atMs !== undefined) {
        upsertMark.run(sessionId, toIso(floorTo(atMs, HOUR_MS)), counts.frames, counts.badFrames, counts.lostFrames);
      }
    },
    close(sessionId, atMs, reason) {
      setClosed.run(toIso(atMs), reason, sessionId);
    },
    heard(sessionId, atMs) {
      const at = toIso(atMs);
      setHeard.run(at, sessionId, at);
    },
    closeAbandoned(reason) {
      return closeOpen.run(reason).changes;
    },
    latest(decoderId) {
      const row = selectLatest.get(decoderId) as SessionRow | undefined;
      return row ? toRecord(row) : null;
    },
    uptimeSince(decoderId, sinceMs, nowMs) {
      const result: DecoderUptime = { windowMs: Math.max(0, nowMs - sinceMs), connectedMs: 0, sessions: 0, frames: 0, badFrames: 0, lostFrames: 0 };
      const rows = selectOverlapping.all(decoderId, toIso(nowMs), toIso(sinceMs)) as SessionRow[];
      const spans: Array<[number, number]> = [];
      for (const row of rows) {
        const session = toRecord(row);
        const nextAt = fromIsoOrNull(row.next_connected_at ?? null, `decoder_sessions[${row.id}].next`);
        let endAt = session.disconnectedAtMs ?? nowMs;
        if (session.disconnectedAtMs === null && nextAt !== null) endAt = Math.min(endAt, nextAt);
        const start = Math.max(session.connectedAtMs, sinceMs);
        const end = Math.min(endAt, nowMs);
        if (end <= sinceMs) continue; // an abandoned row that in truth ended before the window
        result.sessions += 1;
        if (end > start) spans.push([start, end]);
        // A session that began before the window: subtract its totals as they stood when the window opened
        // (the snapshot of the last whole hour before it). Without a snapshot the whole session counts.
        let base: MarkRow = { frames: 0, bad_frames: 0, lost_frames: 0 };
        if (session.connectedAtMs < sinceMs) {
          base = (selectMarkBefore.get(session.id, toIso(sinceMs - HOUR_MS)) as MarkRow | undefined) ?? base;
        }
        result.frames += Math.max(0, session.frames - base.frames);
        result.badFrames += Math.max(0, session.badFrames - base.bad_frames);
        result.lostFrames += Math.max(0, session.lostFrames - base.lost_frames);
      }
      result.connectedMs = unionLength(spans);
      return result;
    },
  };
}

/** Total length covered by [start, end) spans, each moment counted once however many spans overlap it. */
function unionLength(spans: Array<[number, number]>): number {
  let total = 0;
  let coveredTo = -Infinity;
  for (const [start, end] of [...spans].sort((a, b) => a[0] - b[0])) {
    const from = Math.max(start, coveredTo);
    if (end > from) total += end - from;
    coveredTo = Math.max(coveredTo, end);
  }
  return total;
}

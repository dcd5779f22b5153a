import { Counter, Gauge, Registry, collectDefaultMetrics } from 'prom-client';
import { LOOP_STATES, type LoopState } from '../model/loopState.js';
import { PRIORITIES, type Priority } from '../model/condition.js';
import { DROP_REASONS, type DropReason } from '../protocol/frame.js';

/**
 * The daemon's counters and gauges, in one prom-client registry of its own (never the global one, so
 * tests and a second daemon in one process never share numbers). The daemon updates them; the web
 * server serves `render()` at /metrics.
 *
 * Names follow the Prometheus naming practice (prometheus.io/docs/practices/naming): a `pairwatch_`
 * prefix, counters end in `_total`, units are base units (`_bytes`, `_seconds`).
 */
export interface MetricsOptions {
  /**
   * Also collect prom-client's default process metrics (CPU, memory, and event-loop lag as
   * `nodejs_eventloop_lag_seconds`). Default true; tests of the exposition format may switch it off.
   */
  defaultMetrics?: boolean;
}

export interface Metrics {
  readonly registry: Registry;
  /** The Content-Type header to serve `render()` with. */
  readonly contentType: string;
  readonly frames: Counter<'decoder'>;
  readonly badFrames: Counter<'decoder' | 'reason'>;
  readonly lostFrames: Counter<'decoder'>;
  /** 1 for a loop's current state, 0 for its other states; set through `setLoopState`. */
  readonly loopState: Gauge<'loop' | 'state'>;
  readonly activeAlarms: Gauge<'priority'>;
  readonly outboxPending: Gauge;
  readonly mailFailures: Counter;
  readonly databaseSizeBytes: Gauge;
  readonly stalls: Counter<'activity'>;
  readonly lastStallSeconds: Gauge;
  /** Makes a decoder's series appear at 0 before its first frame, so a rate() has a starting point. */
  addDecoder(decoderId: string): void;
  setLoopState(loopId: string, state: LoopState): void;
  setActiveAlarms(counts: Partial<Record<Priority, number>>): void;
  countBadFrame(decoderId: string, reason: DropReason): void;
  countStall(activity: string, blockedMs: number): void;
  /** The registry in the Prometheus text exposition format. */
  render(): Promise<string>;
}

export function createMetrics(options: MetricsOptions = {}): Metrics {
  const registry = new Registry();
  if (options.defaultMetrics ?? true) collectDefaultMetrics({ register: registry });
  const registers = [registry];

  const frames = new Counter({
    name: 'pairwatch_frames_total',
    help: 'Protocol lines accepted from each decoder.',
    labelNames: ['decoder'] as const,
    registers,
  });
  const badFrames = new Counter({
    name: 'pairwatch_bad_frames_total',
    help: 'Lines dropped from each decoder, by reason (crc, syntax, unknown-type, range, too-long).',
    labelNames: ['decoder', 'reason'] as const,
    registers,
  });
  const lostFrames = new Counter({
    name: 'pairwatch_lost_frames_total',
    help: 'Frames missing from each decoder, counted from gaps in the sequence number.',
    labelNames: ['decoder'] as const,
    registers,
  });
  const loopState = new Gauge({
    name: 'pairwatch_loop_state',
    help: 'Current state of each loop: 1 for the state it is in, 0 for the others.',
    labelNames: ['loop', 'state'] as const,
    registers,
  });
  const activeAlarms = new Gauge({
    name: 'pairwatch_active_alarms',
    help: 'Listed alarms (unacknowledged, acknowledged, returned-unacknowledged, shelved) by priority.',
    labelNames: ['priority'] as const,
    registers,
  });
  const outboxPending = new Gauge({
    name: 'pairwatch_outbox_pending',
    help: 'Messages in the outbox not yet accepted by the mail server.',
    registers,
  });
  const mailFailures = new Counter({
    name: 'pairwatch_mail_failures_total',
    help: 'Failed attempts to hand a message to the mail server.',
    registers,
  });
  const databaseSizeBytes = new Gauge({
    name: 'pairwatch_database_size_bytes',
    help: 'Size of the SQLite database file, including its write-ahead log.',
    registers,
  });
  const stalls = new Counter({
    name: 'pairwatch_stalls_total',
    help: 'Times the event loop was blocked longer than the stall threshold, by what was running.',
    labelNames: ['activity'] as const,
    registers,
  });
  const lastStallSeconds = new Gauge({
    name: 'pairwatch_last_stall_seconds',
    help: 'How long the most recent event-loop stall lasted.',
    registers,
  });

  // Priorities are always present so a dashboard shows 0, not "no data", on a quiet day.
  for (const priority of PRIORITIES) activeAlarms.set({ priority }, 0);
  outboxPending.set(0);
  mailFailures.inc(0);

  return {
    registry,
    contentType: registry.contentType,
    frames,
    badFrames,
    lostFrames,
    loopState,
    activeAlarms,
    outboxPending,
    mailFailures,
    databaseSizeBytes,
    stalls,
    lastStallSeconds,
    addDecoder(decoderId) {
      frames.inc({ decoder: decoderId }, 0);
      lostFrames.inc({ decoder: decoderId }, 0);
      for (const reason of DROP_REASONS) badFrames.inc({ decoder: decoderId, reason }, 0);
    },
    setLoopState(loopId, state) {
      for (const candidate of LOOP_STATES) loopState.set({ loop: loopId, state: candidate }, candidate === state ? 1 : 0);
    },
    setActiveAlarms(counts) {
      for (const priority of PRIORITIES) activeAlarms.set({ priority }, counts[priority] ?? 0);
    },
    countBadFrame(decoderId, reason) {
      badFrames.inc({ decoder: decoderId, reason });
    },
    countStall(activity, blockedMs) {
      stalls.inc({ activity });
      lastStallSeconds.set(blockedMs / 1000);
    },
    render: () => registry.metrics(),
  };
}

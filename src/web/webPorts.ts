import type { AlarmState } from '../model/alarmState.js';
import type { Condition, Priority } from '../model/condition.js';
import type { LoopState } from '../model/loopState.js';
import type { AuditAction } from '../alarms/alarmTypes.js';

/**
 * What the web server needs from the rest of the daemon. The web layer knows nothing of SQL or the
 * alarm engine: reads come through `WebReadModel`, changes through `WebCommands`, live updates
 * through `WebLiveFeed`. The daemon wires real implementations; tests may use the real ones or fakes.
 * Times are epoch milliseconds; the web layer renders them (ISO 8601 UTC in JSON).
 */

export interface LineQualityView {
  pulses: number;
  intervalMeanMs: number | null;
  intervalJitterMs: number | null;
  outOfTolerance: number;
  glitches: number;
  longPulses: number;
  lostFrames: number;
  /** The period of time these figures cover. */
  sinceMs: number;
}

export interface LoopView {
  id: string;
  name: string;
  location: string | null;
  decoder: string;
  input: number;
  state: LoopState;
  sinceMs: number;
  lastPulseAtMs: number | null;
  inService: boolean;
  serviceNote: string | null;
  /** The most urgent listed alarm on this loop, if any. */
  /** `active`: the condition is present now (a latched alarm stays listed after it has gone). */
  alarm: { id: number; condition: Condition; priority: Priority; state: AlarmState; active: boolean } | null;
  intermittent: boolean;
}

export interface LoopDetailView extends LoopView {
  periodMs: number;
  quality: LineQualityView;
}

export interface AlarmView {
  id: number;
  loopId: string | null;
  source: string;
  condition: Condition;
  priority: Priority;
  state: AlarmState;
  active: boolean;
  raisedAtMs: number;
  clearedAtMs: number | null;
  ackedAtMs: number | null;
  ackedBy: string | null;
  note: string | null;
  shelvedUntilMs: number | null;
  shelveReason: string | null;
}

export interface AuditView {
  id: number;
  atMs: number;
  actor: string;
  action: AuditAction;
  note: string | null;
}

export interface AlarmDetailView extends AlarmView {
  loopName: string | null;
  location: string | null;
  /** Who was told and when (first queued, and each mail sent). */
  notified: Array<{ contactId: string; contactName: string; firstQueuedAtMs: number }>;
  audit: AuditView[];
}

export interface EventView {
  /** Stable, opaque id for paging. */
  id: string;
  atMs: number;
  loopId: string | null;
  kind: 'state-change' | 'audit';
  priority: Priority | null;
  summary: string;
  actor: string | null;
  fromState: LoopState | null;
  toState: LoopState | null;
  /** Audit rows: what was done, its note and the alarm's condition, so pages can word the row for people. */
  action?: AuditAction | null;
  note?: string | null;
  condition?: Condition | null;
}

export interface EventQuery {
  loopId?: string;
  priority?: Priority;
  sinceMs?: number;
  untilMs?: number;
  cursor?: string;
  limit: number;
}

export interface DecoderView {
  id: string;
  name: string | null;
  port: string;
  status: 'connecting' | 'connected' | 'disconnected' | 'offline';
  connectedSinceMs: number | null;
  firmware: string | null;
  inputs: number | null;
  frames: number;
  badFrames: number;
  lostFrames: number;
  lastFrameAtMs: number | null;
}

/** 24 h picture of a loop: state bands and the pulse-interval trace. */
export interface LoopTimeline {
  fromMs: number;
  toMs: number;
  states: Array<{ fromMs: number; toMs: number; state: LoopState }>;
  /** Per-minute mean pulse interval and jitter, ms; null where no pulses were seen. */
  intervals: Array<{ atMs: number; meanMs: number | null; jitterMs: number | null; outOfTolerance: number }>;
}

export interface HealthView {
  ok: boolean;
  checks: Array<{ name: 'ingest' | 'store' | 'mail'; ok: boolean; reason: string | null }>;
}

export interface WebReadModel {
  siteName(): string;
  /**
   * A number that changes whenever anything `loops()` or `alarms('active')` returns may have
   * changed. When given, the API serialises those bodies once per version; a read side that cannot
   * tell leaves it out and every request builds its body afresh.
   */
  version?(): number;
  loops(): LoopView[];
  loop(id: string): LoopDetailView | null;
  alarms(status: 'active' | 'all'): AlarmView[];
  alarm(id: number): AlarmDetailView | null;
  events(query: EventQuery): { items: EventView[]; nextCursor: string | null };
  decoders(): DecoderView[];
  timeline(loopId: string, fromMs: number, toMs: number): LoopTimeline | null;
  health(): HealthView;
}

export type CommandResult =
  | { ok: true }
  | { ok: false; code: 'PW_ALARM_NOT_FOUND' | 'PW_LOOP_NOT_FOUND' | 'PW_ALARM_BAD_ACTION' | 'PW_ACK_LINK_USED' | 'PW_ACTION_NOT_RECORDED'; message: string };

/** Spends an acknowledge link; false when it was spent already. */
export type SpendAckLink = () => boolean;

export interface WebCommands {
  /**
   * With `spendLink`, the link is spent inside the transaction that records the acknowledgement, and
   * only if the acknowledgement is accepted (a refused one leaves the link usable).
   */
  acknowledge(alarmId: number, actor: string, note: string | null, spendLink?: SpendAckLink): CommandResult;
  shelve(alarmId: number, actor: string, minutes: number, reason: string): CommandResult;
  unshelve(alarmId: number, actor: string): CommandResult;
  takeOutOfService(loopId: string, actor: string, note: string): CommandResult;
  returnToService(loopId: string, actor: string, note: string | null): CommandResult;
}

export type LiveEvent = { type: 'loops' } | { type: 'alarms' };

export interface WebLiveFeed {
  subscribe(listener: (event: LiveEvent) => void): () => void;
}

import type { Logger } from 'pino';
import { initialAlarmBook, nextWakeAt, openAlarms, stepAlarms, type AlarmBook } from '../alarms/alarmEngine.js';
import type { AlarmContext, AlarmInput, AlarmStepResult } from '../alarms/alarmInput.js';
import type { AlarmEffect, AlarmRecord } from '../alarms/alarmTypes.js';
import { policiesFromConfig } from '../alarms/escalationPolicy.js';
import { emptyLineQuality, loopSettingsFromConfig, type LineQuality } from '../classify/index.js';
import type { SiteConfig } from '../config/schema.js';
import type { Condition } from '../model/condition.js';
import type { LoopState } from '../model/loopState.js';
import { queueNotices, type NotifyEffect } from '../notify/noticeQueue.js';
import { sessionCounters } from '../protocol/decoderSession.js';
import { alarmInputsFor, loopsById, raiseFor, type LoopsById } from '../site/alarmInputsFor.js';
import { DECODER_CLOCK_AHEAD_MS, indexSite, initialSiteState, stepSite, takeSiteQuality, type SiteIndex } from '../site/siteStep.js';
import type { SiteEffect, SiteInput, SiteState } from '../site/siteTypes.js';
import type { CommitOutcome, DurableWriter } from '../store/createDurableWriter.js';
import type { EdgeRow } from '../store/edgeRepo.js';
import type { Store } from '../store/openStore.js';
import { recordRecipient } from '../store/alarmRepo.js';
import type { DirectNotices } from './createDirectNotices.js';

/**
 * The monitor's shell around the pure core: it feeds lines to the site step, maps effects to alarm
 * inputs, and commits state changes, alarms, audit rows and queued notices in one transaction before
 * anything acts on them. It owns no timers and reads no clock: the scheduler passes `now` in.
 */
export interface DecoderLinkStatus {
  state: 'connecting' | 'connected' | 'disconnected';
  reason: string | null;
  sinceMs: number;
}

export interface LoopLive {
  state: LoopState;
  sinceMs: number;
  lastPulseAtMs: number | null;
  intermittent: boolean;
  /** Quality over the current minute plus the previous full minute, for the loop page. */
  quality: LineQuality;
  qualitySinceMs: number;
}

export interface MonitorCoreOptions {
  config: SiteConfig;
  store: Store;
  writer: DurableWriter;
  logger: Logger;
  now: number;
  /** Told after every committed change, so the board can refresh. */
  onChange?: (what: 'loops' | 'alarms') => void;
  /** Runs inside the transaction that commits alarm effects (the MQTT event outbox rides along). */
  onAlarmEffects?: (s: Store, effects: readonly AlarmEffect[], now: number) => void;
  /** Mails alarm notices from memory while storage fails (see createDirectNotices); without it they wait for the disk. */
  directNotices?: Pick<DirectNotices, 'claim' | 'isClaimed' | 'noteAlarm'>;
}

const EDGE_BATCH_ROWS = 2000;
/** Raw edges are high-rate and droppable: one transaction a second (or per 2000 rows) is plenty. */
const EDGE_FLUSH_MS = 1000;
const DECODER_FAULT_QUIET_MS = 10 * 60_000;
const ABANDONED_SESSION_REASON = 'the monitor did not stop cleanly (killed or power lost); closed at the last frame heard';
/** Bad+lost frames over a minute above which the decoder link counts as noisy (common practice: a few per cent). */
const NOISY_RATIO_ON = 0.1;
const NOISY_RATIO_OFF = 0.02;
const NOISY_MIN_BAD = 20;

export function createMonitorCore(options: MonitorCoreOptions) {
  const { config, store, writer, logger } = options;
  const loops: LoopsById = loopsById(config);
  const index: SiteIndex = indexSite({
    loops: config.loops.map((loop) => ({ id: loop.id, decoderId: loop.decoder, input: loop.input, settings: loopSettingsFromConfig(loop) })),
    decoders: config.decoders.map((d) => ({ id: d.id, silenceMs: d.silence, inputs: d.inputs ?? null })),
    decoderClockAheadMs: DECODER_CLOCK_AHEAD_MS,
  });
  const alarmContext: AlarmContext = { policies: policiesFromConfig(config), maxShelveMs: config.web.max_shelve };

  let site: SiteState = initialSiteState(index.definition, options.now);
  const statusRows = new Map(store.loopStatus.all().map((row) => [row.loopId, row]));
  const outOfService = [...statusRows.values()].filter((row) => !row.inService).map((row) => ({ loopId: row.loopId, note: row.serviceNote ?? '' }));
  let book: AlarmBook = initialAlarmBook(store.alarms.listOpen(), store.alarms.maxId() + 1, outOfService);

  // A decoder whose offline alarm is still open from before a restart starts offline, so its first
  // valid line clears that alarm instead of leaving it behind.
  for (const alarm of openAlarms(book)) {
    const decoder = site.decoders[alarm.source];
    if (alarm.condition === 'offline' && alarm.active && decoder) site.decoders[alarm.source] = { ...decoder, offline: true };
  }

  const live = new Map<string, LoopLive>();
  for (const loop of config.loops) {
    live.set(loop.id, {
      state: 'unknown',
      sinceMs: options.now,
      lastPulseAtMs: statusRows.get(loop.id)?.lastPulseAtMs ?? null,
      intermittent: false,
      quality: emptyLineQuality(),
      qualitySinceMs: options.now,
    });
  }
  const links = new Map<string, DecoderLinkStatus>(config.decoders.map((d) => [d.id, { state: 'connecting', reason: null, sinceMs: options.now }]));
  const sessionIds = new Map<string, number>();
  const intermittentLoops = new Set<string>();
  const decoderFaultAt = new Map<string, number>();
  const noisy = new Set<string>();
  const lastMinuteCounters = new Map<string, { frames: number; bad: number; lost: number }>();
  let edgeBuffer: EdgeRow[] = [];
  let edgeBufferSinceMs = 0;
  let pendingLastPulse = new Map<string, number>();
  /**
   * Bumped on every change a reader could see (loop figures, alarms, service, links, quality), so
   * the web can keep a serialised body until the next bump. Reads are synchronous on this thread,
   * so a read after any change always sees a new number.
   */
  let version = 0;

  // Every start records the loops as unknown: the classifier decides afresh within seconds. Sessions a
  // killed process left open are closed at the last frame they heard, so uptime is not counted twice.
  writer.commit('start', (s) => {
    const abandoned = s.decoderSessions.closeAbandoned(ABANDONED_SESSION_REASON);
    if (abandoned > 0) logger.warn({ sessions: abandoned }, `closed ${abandoned} decoder session(s) left open by a monitor that did not stop cleanly`);
    s.loopStatus.ensureLoops(config.loops.map((l) => l.id), options.now);
    for (const loop of config.loops) {
      const previous = s.loopStatus.get(loop.id);
      if (previous && previous.state !== 'unknown') {
        s.stateChanges.insert({ loopId: loop.id, from: previous.state, to: 'unknown', decoderUs: null, at: options.now, reason: 'monitor started' });
      }
      s.loopStatus.setState(loop.id, 'unknown', options.now);
    }
  });

  function applyAlarmEffects(s: Store, effects: readonly AlarmEffect[], now: number): void {
    for (const effect of effects) {
      if (effect.kind === 'alarm') s.alarms.upsert(effect.alarm);
      else if (effect.kind === 'audit') s.audit.insert(effect.entry);
      else if (options.directNotices?.isClaimed(effect)) {
        // Already mailed (or being mailed) from memory while the disk failed: record who was told, queue nothing.
        for (const contactId of new Set(effect.contactIds)) recordRecipient(s.db, effect.alarmId, contactId, now);
      } else queueNotices(s.db, effect, now, config.mail.group_window);
    }
    if (effects.length > 0) options.onAlarmEffects?.(s, effects, now);
  }

  /**
   * Commits alarm work; while storage fails, its notices are handed to the direct mailer instead of
   * waiting in the writer's memory queue with the rest (issue: no alarm mail on a full disk). Claimed
   * before the commit when storage is known to fail, and after it when this very commit found out.
   * "Storage failing" itself is left out: its own alert already goes straight to the transport.
   */
  function commitAlarmWork(label: string, effects: readonly AlarmEffect[], now: number, work: (s: Store) => void): CommitOutcome {
    const direct = options.directNotices;
    const claim = () => {
      if (!direct) return;
      for (const effect of effects) {
        if (effect.kind === 'alarm') direct.noteAlarm(effect.alarm);
        if (effect.kind !== 'notify') continue;
        const alarm = alarmRecordFor(effects, effect);
        if (alarm?.condition === 'storage-failing') continue;
        direct.claim(effect, alarm, now);
      }
    };
    if (writer.status().failing !== null) claim();
    const outcome = writer.commit(label, work);
    if (outcome === 'queued') claim();
    return outcome;
  }

  function alarmRecordFor(effects: readonly AlarmEffect[], notice: NotifyEffect): AlarmRecord | null {
    let found: AlarmRecord | null = null;
    for (const effect of effects) if (effect.kind === 'alarm' && effect.alarm.id === notice.alarmId) found = effect.alarm;
    return found ?? openAlarms(book).find((a) => a.id === notice.alarmId) ?? null;
  }

  /** Runs alarm inputs through the engine; returns the effects to commit (the book is updated at once). */
  function runAlarms(inputs: readonly AlarmInput[], now: number): { effects: AlarmEffect[]; results: AlarmStepResult[] } {
    const effects: AlarmEffect[] = [];
    const results: AlarmStepResult[] = [];
    for (const input of inputs) {
      const result = stepAlarms(book, input, now, alarmContext);
      results.push(result);
      if (result.error) continue;
      book = result.book;
      version += 1;
      effects.push(...result.effects);
    }
    return { effects, results };
  }

  function logAlarmEffects(effects: readonly AlarmEffect[]): void {
    for (const effect of effects) {
      if (effect.kind !== 'audit') continue;
      const { entry } = effect;
      // Stryker disable next-line StringLiteral: the alarm engine emits no mail-sent entries (the outbox worker writes its own), so no action equals the empty string either
      if (entry.action === 'mail-sent') continue;
      logger.info({ alarmId: entry.alarmId, loopId: entry.loopId, action: entry.action, actor: entry.actor, note: entry.note }, `alarm ${entry.action}`);
    }
  }

  function flushEdges(): void {
    if (edgeBuffer.length === 0) return;
    const rows = edgeBuffer;
    edgeBuffer = [];
    const lastEdgeAt = new Map<string, number>();
    for (const row of rows) lastEdgeAt.set(row.decoderId, Math.max(row.at, lastEdgeAt.get(row.decoderId) ?? -Infinity));
    writer.commit(
      'edges',
      (s) => {
        s.edges.insertMany(rows);
        // The last-heard mark a start after a crash closes the session at (to within a flush).
        for (const [decoderId, at] of lastEdgeAt) {
          const id = sessionIds.get(decoderId);
          if (id !== undefined) s.decoderSessions.heard(id, at);
        }
      },
      { droppable: true },
    );
  }

  /** Feeds one input (a decoder line, a link change, or the clock) through the site step and commits what follows. */
  function handle(input: SiteInput, now: number): void {
    const stepped = stepSite(index, site, input, now);
    site = stepped.state;
    if (stepped.effects.length === 0) return;
    commitSiteEffects(stepped.effects, now);
  }

  function commitSiteEffects(effects: readonly SiteEffect[], now: number): void {
    const changes: Array<{ loopId: string; from: LoopState; to: LoopState; atMs: number; decoderUs: number | null; reason: string }> = [];
    const alarmInputs: AlarmInput[] = [];
    const decoderWork: Array<(s: Store) => void> = [];
    version += 1;
    for (const effect of effects) {
      switch (effect.kind) {
        case 'edge':
          if (edgeBuffer.length === 0) edgeBufferSinceMs = now;
          edgeBuffer.push({ decoderId: effect.decoderId, input: effect.input, band: effect.band, decoderUs: effect.decoderUs, at: effect.atMs });
          // An edge is evidence, never an alarm input: most lines are one edge, so skip the mapping below.
          continue;
        case 'loop': {
          const loopLive = live.get(effect.loopId);
          const e = effect.effect;
          if (!loopLive) break;
          if (e.kind === 'pulse') {
            loopLive.lastPulseAtMs = effect.atMs;
            pendingLastPulse.set(effect.loopId, effect.atMs);
          } else if (e.kind === 'state') {
            loopLive.state = e.to;
            loopLive.sinceMs = effect.atMs;
            changes.push({ loopId: effect.loopId, from: e.from, to: e.to, atMs: effect.atMs, decoderUs: e.atUs ?? null, reason: e.reason });
            logger.info({ loopId: effect.loopId, from: e.from, to: e.to, reason: e.reason }, `loop ${effect.loopId}: ${e.from} → ${e.to}`);
          } else if (e.kind === 'intermittent') {
            loopLive.intermittent = e.on;
            if (e.on) intermittentLoops.add(effect.loopId);
            else intermittentLoops.delete(effect.loopId);
          }
          break;
        }
        case 'decoder': {
          const { event, decoderId } = effect;
          if (event.kind === 'hello') {
            logger.info({ decoderId, firmware: event.firmware, loops: event.loops }, `decoder ${decoderId} started (HELLO, firmware ${event.firmware})`);
            decoderWork.push((s) => {
              const id = sessionIds.get(decoderId);
              if (id !== undefined) s.decoderSessions.hello(id, now, event.firmware, event.loops);
            });
            const decoderConfig = config.decoders.find((d) => d.id === decoderId);
            if (decoderConfig?.inputs !== undefined && event.loops !== decoderConfig.inputs) {
              logger.warn({ decoderId, hello: event.loops, configured: decoderConfig.inputs }, `decoder ${decoderId} reports ${event.loops} loops but the config says inputs: ${decoderConfig.inputs}`);
            }
          } else if (event.kind === 'fault') {
            decoderFaultAt.set(decoderId, now);
            logger.warn({ decoderId, code: event.code }, `decoder ${decoderId} reported FAULT ${event.code}`);
          } else if (event.kind === 'dropped') {
            logger.debug({ decoderId, reason: event.reason, detail: event.detail }, 'dropped a line');
          }
          break;
        }
        case 'decoder-offline':
          logger.warn({ decoderId: effect.decoderId, reason: effect.reason }, `decoder ${effect.decoderId} offline: ${effect.reason}`);
          break;
        case 'decoder-online':
          logger.info({ decoderId: effect.decoderId }, `decoder ${effect.decoderId} is talking again`);
          break;
        case 'decoder-clock':
          decoderFaultAt.set(effect.decoderId, now);
          logger.warn({ decoderId: effect.decoderId, aheadMs: effect.aheadMs }, `decoder ${effect.decoderId} clock is ${effect.aheadMs} ms ahead of the host's: frame not applied, its loops start over`);
          break;
        case 'decoder-mass-trip':
          decoderFaultAt.set(effect.decoderId, now);
          logger.warn({ decoderId: effect.decoderId, loops: effect.loops }, `all ${effect.loops} loops of decoder ${effect.decoderId} tripped within a second: taken as the link, not ${effect.loops} trips; the loops start over`);
          break;
      }
      alarmInputs.push(...alarmInputsFor(loops, effect, intermittentLoops));
    }
    if (edgeBuffer.length >= EDGE_BATCH_ROWS) flushEdges();
    if (changes.length === 0 && alarmInputs.length === 0 && decoderWork.length === 0) return;

    const { effects: alarmEffects } = runAlarms(alarmInputs, now);
    // Edges first, so the raw evidence for a state change is stored with it.
    flushEdges();
    commitAlarmWork('state', alarmEffects, now, (s) => {
      for (const change of changes) {
        s.stateChanges.insert({ loopId: change.loopId, from: change.from, to: change.to, decoderUs: change.decoderUs, at: change.atMs, reason: change.reason });
        s.loopStatus.setState(change.loopId, change.to, change.atMs);
      }
      for (const work of decoderWork) work(s);
      applyAlarmEffects(s, alarmEffects, now);
    });
    logAlarmEffects(alarmEffects);
    if (changes.length > 0) options.onChange?.('loops');
    if (alarmEffects.length > 0) options.onChange?.('alarms');
  }

  /**
   * An operator's or the system's action on alarms; refused actions come back with their error.
   * `alsoInTransaction` runs inside the same commit, only for an accepted action (an acknowledge link is
   * spent this way, so a refused acknowledgement leaves it usable).
   */
  function alarmAction(input: AlarmInput, now: number, alsoInTransaction?: () => void): AlarmActionResult {
    const bookBefore = book;
    const [result] = runAlarms([input], now).results;
    // Stryker disable next-line ObjectLiteral,ArrayDeclaration: runAlarms gives one result per input, so the fallback is never built
    if (!result || result.error) return result ?? { book, effects: [] };
    let refusedBy: unknown = null;
    const outcome = commitAlarmWork(`alarm ${input.kind}`, result.effects, now, (s) => {
      try {
        alsoInTransaction?.();
      } catch (error) {
        refusedBy = error;
        throw error;
      }
      if (input.kind === 'out-of-service' || input.kind === 'return-to-service') {
        s.loopStatus.setService(input.loopId, input.kind === 'return-to-service', input.note, input.actor, now);
      }
      applyAlarmEffects(s, result.effects, now);
    });
    if (outcome === 'rejected') {
      // The transaction rolled back (not a disk fault: the caller's own step or a bad row threw), so the
      // action has not happened: memory goes back to what the disk holds, and the caller is told.
      book = bookBefore;
      version += 1;
      return { book, effects: [], error: notRecorded(refusedBy) };
    }
    logAlarmEffects(result.effects);
    options.onChange?.('alarms');
    if (input.kind === 'out-of-service' || input.kind === 'return-to-service') options.onChange?.('loops');
    return result;
  }

  /**
   * Several actions and the caller's own rows in one transaction: a mail reply's acknowledgements
   * commit together with the spent token, the inbox offset and the confirmation mail, or not at all.
   * `alongside` sees every result (refused ones too) and must only touch the store.
   */
  function alarmActionsWith(inputs: readonly AlarmInput[], now: number, label: string, alongside: (s: Store, results: readonly AlarmStepResult[]) => void): AlarmActionResult[] {
    const bookBefore = book;
    const { effects, results } = runAlarms(inputs, now);
    const outcome = commitAlarmWork(label, effects, now, (s) => {
      applyAlarmEffects(s, effects, now);
      alongside(s, results);
    });
    if (outcome === 'rejected') {
      // Rolled back as a whole (see alarmAction): none of the accepted actions happened.
      book = bookBefore;
      version += 1;
      return results.map((r) => (r.error ? r : { book, effects: [], error: notRecorded(null) }));
    }
    logAlarmEffects(effects);
    if (effects.length > 0) options.onChange?.('alarms');
    return results;
  }

  function raiseSystem(condition: Condition, now: number): void {
    alarmAction(raiseFor(loops, 'system', null, condition), now);
  }

  function clearSystem(condition: Condition, now: number): void {
    alarmAction({ kind: 'clear', source: 'system', condition }, now);
  }

  /** Called a few times a second: silence detection, edge batches, shelf expiry, escalation steps and repeats. */
  function tick(now: number): void {
    handle({ kind: 'clock' }, now);
    if (now - edgeBufferSinceMs >= EDGE_FLUSH_MS) flushEdges(); // an empty buffer is a no-op there
    for (const [decoderId, at] of decoderFaultAt) {
      if (now - at >= DECODER_FAULT_QUIET_MS) {
        decoderFaultAt.delete(decoderId);
        alarmAction({ kind: 'clear', source: decoderId, condition: 'decoder-fault' }, now);
      }
    }
    const wake = nextWakeAt(book);
    if (wake !== null && wake <= now) alarmAction({ kind: 'tick' }, now);
  }

  /** Once a minute: line-quality rows, last pulses, decoder counters, noisy-link check. */
  function minute(now: number, bucketMs: number): void {
    const taken = takeSiteQuality(index, site);
    site = taken.state;
    version += 1;
    const lastPulses = pendingLastPulse;
    pendingLastPulse = new Map();
    for (const { loopId, quality } of taken.qualities) {
      const loopLive = live.get(loopId);
      if (loopLive) {
        loopLive.quality = quality;
        loopLive.qualitySinceMs = bucketMs;
      }
    }
    const counters = config.decoders.map((d) => {
      const decoder = site.decoders[d.id]!;
      return { decoderId: d.id, counts: sessionCounters(decoder.session), lastValidAtMs: decoder.lastValidAtMs };
    });
    flushEdges();
    writer.commit(
      'minute',
      (s) => {
        for (const { loopId, quality } of taken.qualities) s.lineQuality.upsertMinute(loopId, bucketMs, quality);
        for (const [loopId, at] of lastPulses) s.loopStatus.setLastPulse(loopId, at);
        for (const { decoderId, counts, lastValidAtMs } of counters) {
          const id = sessionIds.get(decoderId);
          if (id === undefined) continue;
          s.decoderSessions.counters(id, { frames: counts.frames, badFrames: counts.dropped, lostFrames: counts.lost }, now);
          if (lastValidAtMs !== null) s.decoderSessions.heard(id, lastValidAtMs);
        }
      },
      { droppable: true },
    );
    for (const { decoderId, counts } of counters) {
      const previous = lastMinuteCounters.get(decoderId) ?? { frames: 0, bad: 0, lost: 0 };
      lastMinuteCounters.set(decoderId, { frames: counts.frames, bad: counts.dropped, lost: counts.lost });
      const frames = Math.max(0, counts.frames - previous.frames);
      // A garbled line is dropped and then shows up again as the seq gap it leaves: count it once.
      const bad = Math.max(Math.max(0, counts.dropped - previous.bad), Math.max(0, counts.lost - previous.lost));
      const ratio = frames + bad === 0 ? 0 : bad / (frames + bad);
      if (!noisy.has(decoderId) && bad >= NOISY_MIN_BAD && ratio >= NOISY_RATIO_ON) {
        noisy.add(decoderId);
        logger.warn({ decoderId, bad, frames }, `decoder ${decoderId} link is noisy: ${bad} bad or lost frames in a minute`);
        alarmAction(raiseFor(loops, decoderId, null, 'link-noisy'), now);
      } else if (noisy.has(decoderId) && ratio < NOISY_RATIO_OFF) {
        noisy.delete(decoderId);
        alarmAction({ kind: 'clear', source: decoderId, condition: 'link-noisy' }, now);
      }
    }
  }

  function linkStatus(decoderId: string, status: { state: DecoderLinkStatus['state']; reason?: string }, now: number): void {
    const previous = links.get(decoderId);
    links.set(decoderId, { state: status.state, reason: status.reason ?? null, sinceMs: now });
    version += 1;
    // Stryker disable next-line OptionalChaining: links holds every configured decoder, and only those report a status
    if (status.state === 'connected' && previous?.state !== 'connected') {
      logger.info({ decoderId }, `decoder ${decoderId} port open`);
      writer.commit('session open', (s) => {
        sessionIds.set(decoderId, s.decoderSessions.open(decoderId, now));
      });
      lastMinuteCounters.delete(decoderId);
      handle({ kind: 'link-up', decoderId }, now);
    // Stryker disable next-line OptionalChaining: as above
    } else if (status.state === 'disconnected' && previous?.state === 'connected') {
      const reason = status.reason ?? 'port closed';
      const counts = sessionCounters(site.decoders[decoderId]!.session);
      writer.commit('session close', (s) => {
        const id = sessionIds.get(decoderId);
        if (id === undefined) return;
        sessionIds.delete(decoderId);
        s.decoderSessions.counters(id, { frames: counts.frames, badFrames: counts.dropped, lostFrames: counts.lost }, now);
        s.decoderSessions.close(id, now, reason);
      });
      handle({ kind: 'link-down', decoderId, reason }, now);
    }
    options.onChange?.('loops');
  }

  /** On a stop: every open session ends now, with its final counters (the links are closed without status reports then). */
  function closeSessions(now: number, reason: string): void {
    // Read inside the commit: a session opened while the disk failed gets its id only when that queued write lands.
    const counts = new Map(config.decoders.map((d) => [d.id, sessionCounters(site.decoders[d.id]!.session)]));
    writer.commit('sessions closed at stop', (s) => {
      for (const [decoderId, id] of sessionIds) {
        const c = counts.get(decoderId);
        if (c) s.decoderSessions.counters(id, { frames: c.frames, badFrames: c.dropped, lostFrames: c.lost }, now);
        s.decoderSessions.close(id, now, reason);
      }
      sessionIds.clear();
    });
  }

  return {
    handle,
    closeSessions,
    line(decoderId: string, line: string, now: number) {
      handle({ kind: 'line', decoderId, line }, now);
    },
    linkStatus,
    alarmAction,
    alarmActionsWith,
    raiseSystem,
    clearSystem,
    tick,
    minute,
    flushEdges,
    /**
     * The earliest host time at which a decoder that is still talking would count as silent (its last
     * valid line plus its `silence`), or null when none can: the shell wakes the clock input then.
     */
    nextSilenceAtMs(): number | null {
      let earliest: number | null = null;
      for (const decoder of Object.values(site.decoders)) {
        if (decoder.offline || decoder.lastValidAtMs === null) continue;
        const at = decoder.lastValidAtMs + (index.silenceMs.get(decoder.id) ?? 0);
        if (earliest === null || at < earliest) earliest = at;
      }
      return earliest;
    },
    /** Changes whenever anything the read model shows may have changed. */
    version: () => version,
    /** Plain snapshots for the read model. */
    loopLive: (loopId: string) => live.get(loopId) ?? null,
    linkOf: (decoderId: string) => links.get(decoderId) ?? null,
    decoderRuntime: (decoderId: string) => site.decoders[decoderId] ?? null,
    openAlarms: (): AlarmRecord[] => openAlarms(book),
    isLoopInService: (loopId: string) => !book.outOfService.some((o) => o.loopId === loopId),
    outOfServiceNote: (loopId: string) => book.outOfService.find((o) => o.loopId === loopId)?.note ?? null,
  };
}

export type MonitorCore = ReturnType<typeof createMonitorCore>;

/**
 * An action the alarm engine accepted but whose commit was rolled back: the caller's own in-transaction
 * step refused it (a spent acknowledge link) or a row could not be written for a reason other than the disk.
 */
export interface ActionNotRecorded {
  code: 'PW_ACK_LINK_USED' | 'PW_ACTION_NOT_RECORDED';
  message: string;
}
export type AlarmActionResult = Omit<AlarmStepResult, 'error'> & { error?: AlarmStepResult['error'] | ActionNotRecorded };

function notRecorded(refusedBy: unknown): ActionNotRecorded {
  const code = (refusedBy as { code?: unknown } | null)?.code;
  if (code === 'PW_ACK_LINK_USED') return { code, message: (refusedBy as Error).message };
  return { code: 'PW_ACTION_NOT_RECORDED', message: 'the action could not be recorded, so it has not happened; the log has the details' };
}

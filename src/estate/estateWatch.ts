import { initialAlarmBook, stepAlarms, type AlarmBook, type AlarmContext, type AlarmInput } from '../alarms/alarmEngine.js';
import type { AlarmEffect, AlarmRecord } from '../alarms/alarmTypes.js';
import { DEFAULT_POLICY_NAME } from '../alarms/escalationPolicy.js';
import type { Priority } from '../model/condition.js';
import { CONDITION_PRIORITY } from '../model/condition.js';
import type { AlarmPayload } from '../mqtt/sitePayloads.js';
import { composeNoticeMail } from '../notify/composeNoticeMail.js';
import type { NoticeAlarm, PendingNotice } from '../alarms/noticeTypes.js';
import { planDigests } from '../notify/noticeQueue.js';
import type { DecoderRef, LoopRef, NoticeSettings } from '../notify/noticeSettings.js';
import type { OutboxMessage } from '../model/outboxMessage.js';

/**
 * The estate's own alarms: every site alarm the estate sees unacknowledged, and every site that is
 * not reporting, becomes an alarm in the estate's alarm book, run by the site's own alarm engine
 * (lifecycle and escalation planner from src/alarms), so it is repeated and escalated by the estate's
 * `escalation` policies until the site reports it acknowledged, shelved or cleared. Notices wait out
 * the estate's grouping window and become the site's notice mail (src/notify), ready for the outbox.
 *
 * Pure: `reconcileEstate(watch, sites, now, ctx)` and `dueEstateMail(watch, now, settings)`. Nothing
 * here is stored: after a restart the retained topics raise the same alarms again.
 */

/** What the estate knows of one site at this moment, from its estate book. */
export interface SiteObservation {
  siteId: string;
  name: string;
  reporting: boolean;
  /** The site's retained active-alarm list; null while none has arrived. */
  alarms: readonly AlarmPayload[] | null;
  /** Loop id → name and location, for the mail's labels. */
  loops: ReadonlyArray<{ id: string; name: string }>;
  /** Heard anything at all (a status message) since the estate started. */
  heard: boolean;
}

export interface EstateWatch {
  book: AlarmBook;
  /** Notices waiting for their contact's grouping window (in memory: the outbox is the durable part). */
  pending: PendingNotice[];
  nextNoticeId: number;
  /** The latest record of every alarm a waiting notice or a mail refers to (closed ones too, until mailed). */
  records: Record<number, AlarmRecord>;
  /** Contacts told so far, per estate alarm. */
  recipients: Record<number, string[]>;
  /** Message-ID of the first mail about each estate alarm, so later mails thread under it. */
  threads: Record<number, string>;
  /** Labels for the mail: estate alarm id → what it is about ("Ash Farm: North shed"). */
  labels: Record<number, string>;
  startedAt: number;
}

export interface EstateWatchContext {
  alarms: AlarmContext;
  groupWindowMs: number;
  /** A site never heard from reads "not reporting" only after this long (the retained topics arrive first). */
  startupGraceMs: number;
}

/** The actor the estate names when it closes its own alarm because the site moved on. */
export const ESTATE_ACTOR = 'estate';

export function initialEstateWatch(now: number): EstateWatch {
  return { book: initialAlarmBook([], 1, []), pending: [], nextNoticeId: 1, records: {}, recipients: {}, threads: {}, labels: {}, startedAt: now };
}

/** The engine's `source` for a site alarm (a site's own "not reporting" trouble uses the bare site id). */
export const siteAlarmSource = (siteId: string, siteAlarmId: number) => `${siteId}/${siteAlarmId}`;

/** A policy named after the priority (`alarm`, `trouble`, `system`) if the estate has one, else `default`. */
function policyFor(priority: Priority, ctx: EstateWatchContext): string {
  return priority in ctx.alarms.policies ? priority : DEFAULT_POLICY_NAME;
}

interface Run {
  watch: EstateWatch;
  now: number;
  ctx: EstateWatchContext;
}

function apply(run: Run, input: AlarmInput): void {
  const result = stepAlarms(run.watch.book, input, run.now, run.ctx.alarms);
  // A refusal (say, acknowledging what the engine already closed) changes nothing and needs no notice.
  if (result.error) return;
  run.watch = { ...run.watch, book: result.book };
  for (const effect of result.effects) take(run, effect);
}

function take(run: Run, effect: AlarmEffect): void {
  const w = run.watch;
  if (effect.kind === 'alarm') {
    // Kept even once closed: the notice that follows (cleared, acknowledged) is mailed with the final record.
    run.watch = { ...w, records: { ...w.records, [effect.alarm.id]: effect.alarm } };
    return;
  }
  if (effect.kind !== 'notify') return;
  const pending = [...w.pending];
  const recipients = { ...w.recipients };
  let nextNoticeId = w.nextNoticeId;
  for (const contactId of new Set(effect.contactIds)) {
    // planDigests sends all of a contact's notices once the earliest is due, so later ones ride in the open window.
    const dueAt = run.now + Math.max(0, run.ctx.groupWindowMs);
    pending.push({ id: nextNoticeId++, contactId, alarmId: effect.alarmId, kind: effect.notice, createdAt: run.now, dueAt, actor: effect.actor, note: effect.note });
    const told = recipients[effect.alarmId] ?? [];
    if (!told.includes(contactId)) recipients[effect.alarmId] = [...told, contactId];
  }
  run.watch = { ...w, pending, recipients, nextNoticeId };
}

/** Forgets what belongs to closed alarms no waiting notice refers to. */
function prune(watch: EstateWatch): EstateWatch {
  const wanted = new Set<number>([...watch.book.alarms.map((a) => a.id), ...watch.pending.flatMap((n) => (n.alarmId === null ? [] : [n.alarmId]))]);
  const keep = <T>(table: Record<number, T>) => Object.fromEntries(Object.entries(table).filter(([id]) => wanted.has(Number(id)))) as Record<number, T>;
  return { ...watch, records: keep(watch.records), recipients: keep(watch.recipients), threads: keep(watch.threads), labels: keep(watch.labels) };
}

function openFor(run: Run, source: string): AlarmRecord | undefined {
  return run.watch.book.alarms.find((a) => a.source === source);
}

function labelOpen(run: Run, source: string, label: string): void {
  const record = openFor(run, source);
  if (record && !(record.id in run.watch.labels)) run.watch = { ...run.watch, labels: { ...run.watch.labels, [record.id]: label } };
}

/** Brings the estate's record of one site alarm in line with what the site says about it. */
function followSiteAlarm(run: Run, site: SiteObservation, alarm: AlarmPayload): void {
  const source = siteAlarmSource(site.siteId, alarm.id);
  let mine = openFor(run, source);
  if (!mine) {
    // Only an alarm still waiting for someone at the site is worth escalating from here.
    if (alarm.state !== 'unacknowledged') return;
    apply(run, { kind: 'raise', source, loopId: null, condition: alarm.condition, latched: false, policy: policyFor(CONDITION_PRIORITY[alarm.condition], run.ctx) });
    labelOpen(run, source, labelFor(site, alarm));
    return;
  }
  switch (alarm.state) {
    case 'unacknowledged':
      if (mine.state === 'shelved') apply(run, { kind: 'unshelve', alarmId: mine.id, actor: siteActor(site, null) });
      mine = openFor(run, source);
      if (mine?.state === 'acknowledged') {
        // Annunciated afresh at the site while the estate missed the shelving in between: a new occurrence here.
        closeMine(run, source, siteActor(site, null), 'annunciated again at the site');
        mine = undefined;
      }
      // Active again at the site, or new again: escalate here.
      if (!mine || mine.state === 'returned-unacknowledged') {
        apply(run, { kind: 'raise', source, loopId: null, condition: alarm.condition, latched: false, policy: mine?.policy ?? policyFor(CONDITION_PRIORITY[alarm.condition], run.ctx) });
        labelOpen(run, source, labelFor(site, alarm));
      }
      return;
    case 'acknowledged':
      if (mine.state === 'unacknowledged' || mine.state === 'returned-unacknowledged') {
        apply(run, { kind: 'ack', alarmId: mine.id, actor: siteActor(site, alarm.ackedBy), note: alarm.note });
      }
      return;
    case 'shelved': {
      const until = alarm.shelvedUntil === null ? NaN : Date.parse(alarm.shelvedUntil);
      if (mine.state === 'unacknowledged' && until > run.now) {
        apply(run, { kind: 'shelve', alarmId: mine.id, actor: siteActor(site, null), durationMs: until - run.now, reason: alarm.shelveReason ?? 'shelved at the site' });
      }
      return;
    }
    case 'returned-unacknowledged':
    case 'out-of-service':
      // No longer calling for anyone at the site: stop escalating (the engine's "returned to normal").
      if (mine.active) apply(run, { kind: 'clear', source, condition: mine.condition });
      return;
    case 'normal':
      closeMine(run, source, siteActor(site, alarm.ackedBy), 'closed at the site');
  }
}

function labelFor(site: SiteObservation, alarm: AlarmPayload): string {
  const loop = alarm.loopId ? site.loops.find((l) => l.id === alarm.loopId) : undefined;
  return `${site.name}: ${loop?.name ?? alarm.loopId ?? (alarm.source === 'system' ? 'monitor' : `decoder ${alarm.source}`)}`;
}

function siteActor(site: SiteObservation, who: string | null): string {
  return who ? `${who} at ${site.name}` : site.name;
}

/** Ends the estate's record for good: acknowledged (by whoever did it at the site) and cleared. */
function closeMine(run: Run, source: string, actor: string, note: string): void {
  let mine = openFor(run, source);
  if (mine?.state === 'shelved') apply(run, { kind: 'unshelve', alarmId: mine.id, actor });
  mine = openFor(run, source);
  if (mine && mine.ackedAt === null) apply(run, { kind: 'ack', alarmId: mine.id, actor, note });
  mine = openFor(run, source);
  if (mine?.active) apply(run, { kind: 'clear', source, condition: mine.condition });
}

/**
 * One look at every site at `now`: raises, follows and closes the estate's alarms, then lets time
 * pass (escalation steps and repeats due). Call it after messages arrive and on a steady beat.
 */
export function reconcileEstate(watch: EstateWatch, sites: readonly SiteObservation[], now: number, ctx: EstateWatchContext): EstateWatch {
  const run: Run = { watch, now, ctx };
  for (const site of sites) {
    const own = site.siteId;
    const mute = !site.reporting && (site.heard || now - watch.startedAt >= ctx.startupGraceMs);
    if (mute) {
      apply(run, { kind: 'raise', source: own, loopId: null, condition: 'site-not-reporting', latched: false, policy: policyFor('trouble', ctx) });
      labelOpen(run, own, site.name);
    } else if (site.reporting && openFor(run, own)) {
      closeMine(run, own, ESTATE_ACTOR, 'reporting again');
    }
    // A silent site's list is frozen; what it last said still stands (and its alarms keep escalating).
    if (!site.reporting || site.alarms === null) continue;
    const listed = new Set<string>();
    for (const alarm of site.alarms) {
      listed.add(siteAlarmSource(site.siteId, alarm.id));
      followSiteAlarm(run, site, alarm);
    }
    const prefix = `${site.siteId}/`;
    for (const mine of run.watch.book.alarms.filter((a) => a.source.startsWith(prefix) && !listed.has(a.source))) {
      closeMine(run, mine.source, site.name, 'no longer listed by the site');
    }
  }
  apply(run, { kind: 'tick' });
  return prune(run.watch);
}

/** When the next notice is due to be mailed; null when none waits. */
export function nextEstateMailAt(watch: EstateWatch): number | null {
  return watch.pending.length === 0 ? null : Math.min(...watch.pending.map((n) => n.dueAt));
}

/**
 * The mails due at `now`, one per contact listing everything that contact is told (the site's
 * composeNoticeMail, with the estate's name and labels). The caller puts them in the outbox in one
 * transaction; the watch returned no longer holds their notices.
 */
export function dueEstateMail(watch: EstateWatch, now: number, settings: Omit<NoticeSettings, 'loops' | 'decoders' | 'ack'>): { watch: EstateWatch; messages: OutboxMessage[] } {
  const digests = planDigests(watch.pending, now);
  if (digests.length === 0) return { watch, messages: [] };
  const threads = { ...watch.threads };
  const messages: OutboxMessage[] = [];
  const mailed = new Set<number>();
  for (const digest of digests) {
    if (!settings.contacts.some((c) => c.id === digest.contactId)) {
      for (const n of digest.notices) mailed.add(n.id);
      continue;
    }
    const alarms = new Map<number, NoticeAlarm>();
    const loops: LoopRef[] = [];
    const decoders: DecoderRef[] = [];
    for (const notice of digest.notices) {
      const id = notice.alarmId;
      const record = id === null ? undefined : watch.records[id];
      if (id === null || !record || alarms.has(id)) continue;
      alarms.set(id, { ...record, threadMessageId: threads[id] ?? null });
      // The mail names what an alarm is about by loop or by source; the estate gives each alarm its own label.
      const label = watch.labels[id];
      if (label) decoders.push({ id: record.source, name: label });
    }
    const recipients = new Map(Object.entries(watch.recipients).map(([id, told]) => [Number(id), told] as const));
    const message = composeNoticeMail(digest, { ...settings, loops, decoders, ack: null, now, alarms, recipients });
    for (const id of alarms.keys()) threads[id] ??= message.messageId;
    // Outbox audit rows refer to the site's alarms table; the estate's alarms live only in memory.
    messages.push({ ...message, alarmIds: [] });
    for (const n of digest.notices) mailed.add(n.id);
  }
  return { watch: prune({ ...watch, pending: watch.pending.filter((n) => !mailed.has(n.id)), threads }), messages };
}

import { describe, expect, it } from 'vitest';
import { policiesFromConfig } from '../../src/alarms/escalationPolicy.js';
import { parseEstateConfig } from '../../src/estate/loadEstateConfig.js';
import { dueEstateMail, initialEstateWatch, nextEstateMailAt, reconcileEstate, type EstateWatch, type SiteObservation } from '../../src/estate/estateWatch.js';
import type { AlarmPayload } from '../../src/mqtt/sitePayloads.js';
import type { OutboxMessage } from '../../src/model/outboxMessage.js';

/**
 * The estate's own alarms on a fake clock: a site alarm seen unacknowledged is mailed, repeated and
 * escalated by the estate's policy until the site says acknowledged, shelved or cleared; a silent
 * site is a trouble of its own. The timings below come from the policy written here (steward at
 * once, the manager after 10 minutes, reminders every 5 minutes, at most 3), not from the code.
 */
const config = parseEstateConfig(`estate: { name: "Hollow Lane" }
mqtt: { url: "mqtt://127.0.0.1:1883" }
sites: [{ id: ash-farm, name: "Ash Farm" }, { id: birch-yard, name: "Birch Yard" }]
contacts:
  - { id: steward, name: "Estate steward", email: "steward@example.org" }
  - { id: manager, name: "Estate manager", email: "manager@example.org" }
escalation:
  default: { steps: [{ after: 0m, notify: [steward] }, { after: 10m, notify: [manager] }], repeat_every: 5m, max_repeats: 3 }
mail: { from: "estate <estate@example.org>" }
storage: { path: /tmp/never-opened.db }
`);
const MIN = 60_000;
const T0 = Date.parse('2026-03-01T08:00:00Z');
const ctx = (groupWindowMs = 0) => ({ alarms: { policies: policiesFromConfig(config), maxShelveMs: Number.MAX_SAFE_INTEGER }, groupWindowMs, startupGraceMs: 2 * MIN });
let ids = 0;
const settings = { siteName: 'Hollow Lane', timeZone: 'UTC', from: config.mail.from, publicUrl: 'http://127.0.0.1:8090', contacts: config.contacts, newMessageId: () => `<m${++ids}@example.org>` };

function siteAlarm(overrides: Partial<AlarmPayload> = {}): AlarmPayload {
  return {
    id: 7, loopId: 'north-shed', source: 'north-shed', condition: 'tripped', priority: 'alarm', state: 'unacknowledged', active: true,
    raisedAt: new Date(T0).toISOString(), clearedAt: null, ackedAt: null, ackedBy: null, note: null, shelvedUntil: null, shelveReason: null,
    ...overrides,
  };
}

function ash(alarms: AlarmPayload[] | null, reporting = true): SiteObservation {
  return { siteId: 'ash-farm', name: 'Ash Farm', reporting, alarms, loops: [{ id: 'north-shed', name: 'North shed' }], heard: true };
}
const birch = (reporting = true, heard = true): SiteObservation => ({ siteId: 'birch-yard', name: 'Birch Yard', reporting, alarms: reporting ? [] : null, loops: [], heard });

/** A run of the estate on the fake clock: each `at` reconciles what the sites say and collects the mail due. */
function estate(groupWindowMs = 0) {
  let watch: EstateWatch = initialEstateWatch(T0);
  const c = ctx(groupWindowMs);
  return {
    at(t: number, sites: SiteObservation[]): OutboxMessage[] {
      watch = reconcileEstate(watch, sites, t, c);
      const due = dueEstateMail(watch, t, settings);
      watch = due.watch;
      return due.messages;
    },
    watch: () => watch,
  };
}
const who = (m: OutboxMessage) => m.to.map((t) => /<(.*)>/.exec(t)![1]).join(',');

describe('the estate escalates a site alarm with its own policy', () => {
  it('mails the first step at once, repeats every 5 minutes, escalates at 10, and stops when the site acknowledges', () => {
    const e = estate();
    const raised = e.at(T0, [ash([siteAlarm()]), birch()]);
    expect(raised.map(who)).toEqual(['steward@example.org']);
    expect(raised[0]!.subject).toBe('[ALARM] Hollow Lane: Ash Farm: North shed — tripped');
    expect(e.at(T0 + 4 * MIN, [ash([siteAlarm()]), birch()])).toEqual([]);
    const repeat = e.at(T0 + 5 * MIN, [ash([siteAlarm()]), birch()]);
    expect(repeat.map(who)).toEqual(['steward@example.org']);
    expect(repeat[0]!.subject).toContain('tripped, not acknowledged');
    // Later mails thread under the first (RFC 5322 §3.6.4 In-Reply-To / References).
    expect(repeat[0]!.headers['In-Reply-To']).toBe(raised[0]!.messageId);
    const tenMinutes = e.at(T0 + 10 * MIN, [ash([siteAlarm()]), birch()]);
    expect(tenMinutes.map(who).sort()).toEqual(['manager@example.org', 'steward@example.org']);
    expect(tenMinutes.find((m) => who(m) === 'manager@example.org')!.text).toContain('you are now told too');

    const acked = siteAlarm({ state: 'acknowledged', ackedAt: new Date(T0 + 12 * MIN).toISOString(), ackedBy: 'anna', note: 'on my way' });
    const ackMail = e.at(T0 + 12 * MIN, [ash([acked]), birch()]);
    expect(ackMail.map(who).sort()).toEqual(['manager@example.org', 'steward@example.org']);
    expect(ackMail[0]!.subject).toContain('acknowledged by anna at Ash Farm');
    expect(ackMail[0]!.text).toContain('“on my way”');
    for (const t of [15, 20, 30, 60]) expect(e.at(T0 + t * MIN, [ash([acked]), birch()])).toEqual([]);
  });

  it('stops repeating when the site reports the condition cleared before anyone acknowledged', () => {
    const e = estate();
    expect(e.at(T0, [ash([siteAlarm()]), birch()])).toHaveLength(1);
    const cleared = siteAlarm({ state: 'returned-unacknowledged', active: false, clearedAt: new Date(T0 + 2 * MIN).toISOString() });
    const mail = e.at(T0 + 2 * MIN, [ash([cleared]), birch()]);
    expect(mail.map(who)).toEqual(['steward@example.org']);
    expect(mail[0]!.subject).toContain('back to normal');
    for (const t of [5, 10, 15]) expect(e.at(T0 + t * MIN, [ash([cleared]), birch()])).toEqual([]);
    // Gone from the site's list: the estate's record closes (and the watch forgets it).
    e.at(T0 + 16 * MIN, [ash([]), birch()]);
    expect(e.watch().book.alarms).toEqual([]);
    expect(e.watch().records).toEqual({});
  });

  it('stops while the site has it shelved, and escalates again when the site unshelves it', () => {
    const e = estate();
    e.at(T0, [ash([siteAlarm()]), birch()]);
    const shelved = siteAlarm({ state: 'shelved', shelvedUntil: new Date(T0 + 60 * MIN).toISOString(), shelveReason: 'harvest' });
    expect(e.at(T0 + MIN, [ash([shelved]), birch()])[0]!.subject).toContain('shelved');
    for (const t of [5, 10, 15]) expect(e.at(T0 + t * MIN, [ash([shelved]), birch()])).toEqual([]);
    const back = e.at(T0 + 20 * MIN, [ash([siteAlarm()]), birch()]);
    expect(back.length).toBeGreaterThan(0);
    expect(e.watch().book.alarms[0]!.state).toBe('unacknowledged');
  });

  it('does not mail an alarm first seen already acknowledged', () => {
    const e = estate();
    expect(e.at(T0, [ash([siteAlarm({ state: 'acknowledged', ackedBy: 'anna', ackedAt: new Date(T0).toISOString() })]), birch()])).toEqual([]);
    expect(e.watch().book.alarms).toEqual([]);
  });

  it('groups what falls due within the grouping window into one mail per contact', () => {
    const e = estate(30_000);
    expect(e.at(T0, [ash([siteAlarm()]), birch()])).toEqual([]);
    expect(e.at(T0 + 10_000, [ash([siteAlarm(), siteAlarm({ id: 8, loopId: null, source: 'main', condition: 'offline', priority: 'trouble' })]), birch()])).toEqual([]);
    expect(nextEstateMailAt(e.watch())).toBe(T0 + 30_000);
    const mail = e.at(T0 + 30_000, [ash([siteAlarm(), siteAlarm({ id: 8, loopId: null, source: 'main', condition: 'offline', priority: 'trouble' })]), birch()]);
    expect(mail).toHaveLength(1);
    expect(mail[0]!.subject).toBe('[ALARM] Hollow Lane: 2 conditions — Ash Farm: North shed tripped, Ash Farm: decoder main decoder offline');
  });
});

describe('a site not reporting is an estate trouble', () => {
  it('is raised, repeated while the site is silent, and closed when it reports again', () => {
    const e = estate();
    const down = e.at(T0, [ash([]), birch(false)]);
    expect(down.map(who)).toEqual(['steward@example.org']);
    expect(down[0]!.subject).toBe('[TROUBLE] Hollow Lane: Birch Yard — site not reporting');
    expect(e.at(T0 + 5 * MIN, [ash([]), birch(false)])[0]!.subject).toContain('site not reporting, not acknowledged');
    const up = e.at(T0 + 7 * MIN, [ash([]), birch(true)]);
    expect(up[0]!.subject).toBe('[TROUBLE] Hollow Lane: Birch Yard — back to normal');
    for (const t of [10, 15, 20]) expect(e.at(T0 + t * MIN, [ash([]), birch(true)])).toEqual([]);
  });

  it('keeps escalating a silent site\'s last alarms: its frozen list neither acknowledges nor clears them', () => {
    const e = estate();
    e.at(T0, [ash([siteAlarm()]), birch()]);
    const later = e.at(T0 + 5 * MIN, [ash(null, false), birch()]);
    const subjects = later.map((m) => m.subject).join(' | ');
    expect(subjects).toContain('2 conditions');
    expect(e.watch().book.alarms.map((a) => a.condition).sort()).toEqual(['site-not-reporting', 'tripped']);
  });

  it('waits the start-up grace before calling a site never heard from not reporting', () => {
    const e = estate();
    expect(e.at(T0 + MIN, [ash([]), birch(false, false)])).toEqual([]);
    expect(e.at(T0 + 2 * MIN, [ash([]), birch(false, false)])[0]!.subject).toContain('Birch Yard — site not reporting');
  });
});

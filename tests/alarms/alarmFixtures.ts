import { parse } from 'yaml';
import { siteConfigSchema } from '../../src/config/schema.js';
import type { SiteConfig } from '../../src/config/schema.js';
import type { AlarmRecord } from '../../src/alarms/alarmTypes.js';
import type { AlarmContext } from '../../src/alarms/alarmInput.js';
import type { LifecycleEvent } from '../../src/alarms/alarmLifecycle.js';
import type { AlarmEffect, NoticeKind } from '../../src/alarms/alarmTypes.js';
import { policiesFromConfig } from '../../src/alarms/escalationPolicy.js';
import { sampleAlarm } from '../helpers/sampleAlarm.js';

/** Fake clock origin: an invented winter evening. Every expected time in the tests is T0 plus a hand-written offset. */
export const T0 = Date.UTC(2026, 11, 1, 20, 0, 0);
export const MIN = 60_000;
export const HOUR = 60 * MIN;

/**
 * The escalation example from the alarm issue (issue 3), inside an invented site (demo data of our own):
 * office at once, on-call phone at 20 min, repeats every 30 min to both, at most 10.
 */
export const ISSUE_EXAMPLE_YAML = `
site: { name: "Bramblecote" }
decoders:
  - { id: main, port: /dev/ttyACM0, inputs: 8 }
loops:
  - { id: well-pit, name: "Well pit", decoder: main, input: 1 }
  - { id: hay-loft, name: "Hay loft", decoder: main, input: 2 }
contacts:
  - { id: office, name: "Farm office", email: "office@example.org" }
  - { id: oncall, name: "On-call phone", email: "oncall@example.org" }
escalation:
  default:
    steps:
      - { after: 0m,  notify: [office] }
      - { after: 20m, notify: [oncall] }
    repeat_every: 30m
    max_repeats: 10
mail:
  from: "pairwatch <monitor@example.org>"
storage: { path: data/site.db }
`;

export function issueExampleConfig(): SiteConfig {
  return siteConfigSchema.parse(parse(ISSUE_EXAMPLE_YAML));
}

/** Engine context from the issue example; shelving capped at the schema's default of 24 h. */
export function issueContext(): AlarmContext {
  return { policies: policiesFromConfig(issueExampleConfig()), maxShelveMs: 24 * HOUR };
}

/** The shared sample alarm, raised at T0 and not latched. */
export function alarmRecord(overrides: Partial<AlarmRecord> = {}): AlarmRecord {
  return sampleAlarm(T0, overrides);
}

export type NotifyEffect = Extract<AlarmEffect, { kind: 'notify' }>;

/** The notices among the effects, as [kind, contacts] pairs, for compact expectations. */
export function notices(effects: AlarmEffect[]): Array<[NoticeKind, string[]]> {
  return effects.filter((e): e is NotifyEffect => e.kind === 'notify').map((e) => [e.notice, e.contactIds]);
}

export function audits(effects: AlarmEffect[]): string[] {
  return effects.flatMap((e) => (e.kind === 'audit' ? [e.entry.action] : []));
}

export function alarmsIn(effects: AlarmEffect[]): AlarmRecord[] {
  return effects.flatMap((e) => (e.kind === 'alarm' ? [e.alarm] : []));
}

/**
 * One alarm in every lifecycle state it can be in, at `now` (T0 + 10 min in the tables), made by
 * `make` so a table can add what it needs (a pending escalation step). Shared by the ISA-18.2
 * transition table and the escalation table, so both walk the same starting points.
 */
export function lifecycleStarts(now: number, make: (overrides: Partial<AlarmRecord>) => AlarmRecord = alarmRecord) {
  return {
    normal: make({ state: 'normal', active: false, clearedAt: T0 - HOUR, ackedAt: T0 - HOUR, closedAt: T0 - HOUR }),
    unackActive: make({}),
    unackLatched: make({ latched: true }),
    latchedCleared: make({ latched: true, active: false, clearedAt: T0 + MIN }),
    acked: make({ state: 'acknowledged', ackedAt: T0 + MIN, ackedBy: 'sam', note: 'on my way' }),
    returned: make({ state: 'returned-unacknowledged', active: false, clearedAt: T0 + MIN }),
    shelvedActive: make({ state: 'shelved', shelvedUntil: now, shelveReason: 'node being serviced' }),
    shelvedAckedCleared: make({ state: 'shelved', active: false, clearedAt: T0 + 2 * MIN, ackedAt: T0 + MIN, ackedBy: 'sam', shelvedUntil: now, shelveReason: 'r' }),
    shelvedUnackedCleared: make({ state: 'shelved', active: false, clearedAt: T0 + 2 * MIN, shelvedUntil: now, shelveReason: 'r' }),
    shelvedLatchedCleared: make({ state: 'shelved', latched: true, active: false, clearedAt: T0 + 2 * MIN, shelvedUntil: now, shelveReason: 'r' }),
    outOfService: make({ state: 'out-of-service' }),
    outOfServiceCleared: make({ state: 'out-of-service', active: false, clearedAt: T0 + MIN }),
  } satisfies Record<string, AlarmRecord>;
}

/** Every lifecycle event once, a shelve lasting an hour from `now`. */
export function lifecycleEvents(now: number) {
  return {
    active: { kind: 'condition-active' },
    clear: { kind: 'condition-clear' },
    ack: { kind: 'acknowledge', actor: 'sam', note: 'checked' },
    shelve: { kind: 'shelve', actor: 'sam', until: now + HOUR, reason: 'heater being fitted' },
    unshelve: { kind: 'unshelve', actor: 'sam' },
    expiry: { kind: 'shelve-expiry' },
    remove: { kind: 'remove-from-service' },
    back: { kind: 'return-to-service' },
  } satisfies Record<string, LifecycleEvent>;
}

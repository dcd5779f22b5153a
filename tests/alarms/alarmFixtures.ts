import { parse } from 'yaml';
import { siteConfigSchema } from '../../src/config/schema.js';
import type { SiteConfig } from '../../src/config/schema.js';
import type { AlarmRecord } from '../../src/alarms/alarmTypes.js';
import type { AlarmContext } from '../../src/alarms/alarmInput.js';
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

import { parse } from 'yaml';
import { describe, expect, it } from 'vitest';
import { siteConfigSchema } from '../../src/config/schema.js';
import { policiesFromConfig } from '../../src/alarms/escalationPolicy.js';
import { raiseSettingsFor } from '../../src/alarms/raiseSettings.js';
import { ISSUE_EXAMPLE_YAML, issueExampleConfig } from './alarmFixtures.js';

describe('policiesFromConfig', () => {
  it('reads the issue 3 example: office at once, oncall after 20 min, repeats every 30 min, 10 at most', () => {
    const policies = policiesFromConfig(issueExampleConfig());
    // 20 min = 1 200 000 ms, 30 min = 1 800 000 ms (hand-computed).
    expect(policies['default']).toEqual({
      name: 'default',
      steps: [
        { afterMs: 0, contactIds: ['office'] },
        { afterMs: 1_200_000, contactIds: ['oncall'] },
      ],
      repeatEveryMs: 1_800_000,
      maxRepeats: 10,
    });
  });

  it('falls back to "everyone at once, every 30 min, 10 times" when the site names no default policy', () => {
    const raw = parse(ISSUE_EXAMPLE_YAML) as Record<string, unknown>;
    raw['escalation'] = { trouble: { steps: [{ after: '5m', notify: ['office'] }] } };
    const policies = policiesFromConfig(siteConfigSchema.parse(raw));
    expect(policies['default']).toEqual({
      name: 'default',
      steps: [{ afterMs: 0, contactIds: ['office', 'oncall'] }],
      repeatEveryMs: 1_800_000,
      maxRepeats: 10,
    });
    // No repeat_every: no repeats; max_repeats takes the schema default.
    expect(policies['trouble']).toEqual({ name: 'trouble', steps: [{ afterMs: 300_000, contactIds: ['office'] }], repeatEveryMs: null, maxRepeats: 10 });
  });

  it('never floods on a zero repeat interval: the config refuses it, and the policy would read it as no repeats', () => {
    const raw = parse(ISSUE_EXAMPLE_YAML) as { escalation: { default: Record<string, unknown> } };
    raw.escalation.default['repeat_every'] = '0s';
    expect(siteConfigSchema.safeParse(raw).success).toBe(false);
    const parsed = siteConfigSchema.parse(parse(ISSUE_EXAMPLE_YAML));
    parsed.escalation['default']!.repeat_every = 0;
    expect(policiesFromConfig(parsed)['default']?.repeatEveryMs).toBeNull();
  });
});

describe('raiseSettingsFor', () => {
  it('latches alarms and not trouble by default (issue 3: "default on for alarms, off for trouble")', () => {
    const loop = issueExampleConfig().loops[0]!;
    expect(raiseSettingsFor(loop, 'tripped')).toEqual({ latched: true, policy: 'default' });
    expect(raiseSettingsFor(loop, 'open')).toEqual({ latched: false, policy: 'default' });
    expect(raiseSettingsFor(null, 'mail-failing')).toEqual({ latched: false, policy: 'default' });
  });

  it('uses the loop\'s trouble policy for trouble and its alarm policy for alarms', () => {
    const loop = { ...issueExampleConfig().loops[0]!, escalation: 'night', trouble_escalation: 'daytime' };
    expect(raiseSettingsFor(loop, 'tripped').policy).toBe('night');
    expect(raiseSettingsFor(loop, 'shorted').policy).toBe('daytime');
  });
});

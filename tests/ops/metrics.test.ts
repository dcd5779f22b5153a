import { describe, expect, it } from 'vitest';
import { createMetrics } from '../../src/ops/metrics.js';

/**
 * A structural reader of the Prometheus text exposition format, written from the format's published
 * description (prometheus.io/docs/instrumenting/exposition_formats/, "Text format details"):
 * `# HELP name text`, `# TYPE name counter|gauge|histogram|summary|untyped`, and sample lines
 * `name{label="value",...} value [timestamp]`. Metric names match [a-zA-Z_:][a-zA-Z0-9_:]*,
 * label names [a-zA-Z_][a-zA-Z0-9_]*.
 */
interface Sample {
  name: string;
  labels: Record<string, string>;
  value: number;
}
interface Family {
  help?: string;
  type?: string;
  samples: Sample[];
}
const METRIC_NAME = /^[a-zA-Z_:][a-zA-Z0-9_:]*$/;
const LABEL_PAIR = /([a-zA-Z_][a-zA-Z0-9_]*)="((?:[^"\\]|\\.)*)"/g;
const SAMPLE_LINE = /^([a-zA-Z_:][a-zA-Z0-9_:]*)(\{(?:[a-zA-Z_][a-zA-Z0-9_]*="(?:[^"\\]|\\.)*",?)*\})? ([^ ]+)( -?\d+)?$/;
const TYPES = new Set(['counter', 'gauge', 'histogram', 'summary', 'untyped']);

function readExposition(text: string): Map<string, Family> {
  const families = new Map<string, Family>();
  const family = (name: string) => {
    let f = families.get(name);
    if (!f) families.set(name, (f = { samples: [] }));
    return f;
  };
  for (const line of text.split('\n')) {
    if (line === '') continue;
    if (line.startsWith('# HELP ')) {
      const [, name, help] = /^# HELP (\S+) (.*)$/.exec(line) ?? [];
      expect(name, line).toMatch(METRIC_NAME);
      family(name!).help = help;
    } else if (line.startsWith('# TYPE ')) {
      const [, name, type] = /^# TYPE (\S+) (\S+)$/.exec(line) ?? [];
      expect(name, line).toMatch(METRIC_NAME);
      expect(TYPES.has(type!), line).toBe(true);
      family(name!).type = type;
    } else if (line.startsWith('#')) {
      continue; // other comments are allowed by the format
    } else {
      const match = SAMPLE_LINE.exec(line);
      expect(match, `not a sample line: ${line}`).not.toBeNull();
      const [, name, labelText, valueText] = match!;
      const labels: Record<string, string> = {};
      for (const [, key, value] of (labelText ?? '').matchAll(LABEL_PAIR)) labels[key!] = value!;
      // Prometheus reads values with Go's strconv.ParseFloat, which takes NaN and Inf in any letter
      // case (prom-client writes "Nan" for an event-loop histogram that has no samples yet).
      const special = /^[+-]?(inf|nan)$/i.test(valueText!);
      const value = special ? Number(valueText!.replace(/inf/i, 'Infinity').replace(/nan/i, 'NaN')) : Number(valueText);
      expect(!special && Number.isNaN(value), line).toBe(false);
      // Histogram and summary samples carry suffixes on the family name.
      const base = name!.replace(/_(bucket|sum|count|created)$/, '');
      family(families.has(name!) ? name! : base).samples.push({ name: name!, labels, value });
    }
  }
  return families;
}

describe('createMetrics', () => {
  it('renders every figure the operations issue asks for, in the text exposition format', async () => {
    const metrics = createMetrics();
    metrics.addDecoder('main');
    metrics.frames.inc({ decoder: 'main' }, 42);
    metrics.countBadFrame('main', 'crc');
    metrics.lostFrames.inc({ decoder: 'main' }, 3);
    metrics.setLoopState('well-pit', 'tripped');
    metrics.setActiveAlarms({ alarm: 1, trouble: 2 });
    metrics.outboxPending.set(4);
    metrics.mailFailures.inc();
    metrics.databaseSizeBytes.set(123_456);
    metrics.countStall('retention', 4200);

    const text = await metrics.render();
    const families = readExposition(text);
    const sample = (name: string, labels: Record<string, string> = {}) =>
      families.get(name)?.samples.find((s) => Object.entries(labels).every(([k, v]) => s.labels[k] === v))?.value;

    for (const [name, type] of [
      ['pairwatch_frames_total', 'counter'],
      ['pairwatch_bad_frames_total', 'counter'],
      ['pairwatch_lost_frames_total', 'counter'],
      ['pairwatch_loop_state', 'gauge'],
      ['pairwatch_active_alarms', 'gauge'],
      ['pairwatch_outbox_pending', 'gauge'],
      ['pairwatch_mail_failures_total', 'counter'],
      ['pairwatch_database_size_bytes', 'gauge'],
      ['pairwatch_stalls_total', 'counter'],
      // prom-client's default metrics supply the event-loop lag.
      ['nodejs_eventloop_lag_seconds', 'gauge'],
    ] as const) {
      const family = families.get(name);
      expect(family, name).toBeDefined();
      expect(family!.type, name).toBe(type);
      expect(family!.help, name).toBeTruthy();
    }
    expect(sample('pairwatch_frames_total', { decoder: 'main' })).toBe(42);
    expect(sample('pairwatch_bad_frames_total', { decoder: 'main', reason: 'crc' })).toBe(1);
    expect(sample('pairwatch_bad_frames_total', { decoder: 'main', reason: 'syntax' })).toBe(0);
    expect(sample('pairwatch_lost_frames_total', { decoder: 'main' })).toBe(3);
    expect(sample('pairwatch_loop_state', { loop: 'well-pit', state: 'tripped' })).toBe(1);
    expect(sample('pairwatch_loop_state', { loop: 'well-pit', state: 'healthy' })).toBe(0);
    expect(sample('pairwatch_active_alarms', { priority: 'alarm' })).toBe(1);
    expect(sample('pairwatch_active_alarms', { priority: 'trouble' })).toBe(2);
    expect(sample('pairwatch_active_alarms', { priority: 'system' })).toBe(0);
    expect(sample('pairwatch_outbox_pending')).toBe(4);
    expect(sample('pairwatch_mail_failures_total')).toBe(1);
    expect(sample('pairwatch_database_size_bytes')).toBe(123_456);
    expect(sample('pairwatch_stalls_total', { activity: 'retention' })).toBe(1);
    expect(sample('pairwatch_last_stall_seconds')).toBe(4.2);
  });

  it('moves a loop between states so exactly one state reads 1', async () => {
    const metrics = createMetrics({ defaultMetrics: false });
    metrics.setLoopState('pump-house', 'open');
    metrics.setLoopState('pump-house', 'healthy');
    const samples = readExposition(await metrics.render()).get('pairwatch_loop_state')!.samples;
    const ones = samples.filter((s) => s.value === 1);
    expect(ones).toEqual([{ name: 'pairwatch_loop_state', labels: { loop: 'pump-house', state: 'healthy' }, value: 1 }]);
    expect(samples).toHaveLength(6); // one series per loop state
  });

  it('keeps separate registries apart', async () => {
    const a = createMetrics({ defaultMetrics: false });
    const b = createMetrics({ defaultMetrics: false });
    a.mailFailures.inc(5);
    expect(await b.render()).toContain('pairwatch_mail_failures_total 0');
    expect(a.contentType).toMatch(/^text\/plain/);
  });
});

import { z } from 'zod';
import { duration } from '../config/schema.js';

/**
 * The simulated decoder's scenario file (YAML): the decoder, the loops wired to it, and a timeline of
 * things that happen to them. Durations are written like the site config's (`40s`, `6m`, or plain ms).
 * Every object is strict, so a misspelt key is an error naming it.
 */
const input = z.number().int().min(1).max(64);

const decoderSchema = z.strictObject({
  inputs: z.number().int().min(1).max(64),
  firmware: z
    .string()
    .regex(/^[A-Za-z0-9._-]{1,24}$/, 'must be 1–24 of A-Z a-z 0-9 . _ - (it is sent in HELLO)')
    .default('sim-1'),
  /** How often the decoder sends TICK; the protocol requires at least every 250 ms. */
  tick_ms: z.number().int().min(1).max(250).default(200),
  /** Start the decoder clock this long before its 32-bit wrap, so the run crosses it. */
  wrap_clock_after: duration.optional(),
});

const loopSchema = z.strictObject({
  input,
  name: z.string().max(80).optional(),
  period_ms: z.number().positive().max(3_600_000).default(500),
  pulse_ms: z.number().positive().default(1),
  /** Each interval is period × (1 ± jitter), uniformly spread. */
  jitter: z.number().min(0).max(0.9).default(0),
});

const at = { at: duration };
const onLoop = { ...at, input };

const eventSchema = z.discriminatedUnion('action', [
  /** The node's reading crossed its threshold: it stops pulsing (band stays N). */
  z.strictObject({ ...onLoop, action: z.literal('freeze') }),
  z.strictObject({ ...onLoop, action: z.literal('thaw') }),
  /** The cable is cut: no standby current, band O held, node unpowered. */
  z.strictObject({ ...onLoop, action: z.literal('cut') }),
  z.strictObject({ ...onLoop, action: z.literal('repair') }),
  /** The pair is shorted: band H held. */
  z.strictObject({ ...onLoop, action: z.literal('short') }),
  z.strictObject({ ...onLoop, action: z.literal('clear-short') }),
  /** Interference: brief H glitches, shorter than any valid pulse, at random for a while. */
  z.strictObject({
    ...onLoop,
    action: z.literal('noise'),
    for: duration,
    rate_hz: z.number().positive().max(1000).default(20),
    glitch_us: z.tuple([z.number().int().min(1), z.number().int().min(1)]).default([20, 150]),
  }),
  /** The next `count` frames never reach the host (their seq numbers are used up). */
  z.strictObject({ ...at, action: z.literal('lose-frames'), count: z.number().int().min(1).max(65535) }),
  /** The decoder restarts: HELLO, seq from 0, clock from 0. */
  z.strictObject({ ...at, action: z.literal('restart') }),
  /** A fraction of lines arrive with a wrong checksum for a while. */
  z.strictObject({ ...at, action: z.literal('corrupt'), fraction: z.number().gt(0).max(1), for: duration }),
]);

export const scenarioSchema = z
  .strictObject({
    /** A line for people reading the file; not used by the simulator. */
    description: z.string().optional(),
    decoder: decoderSchema,
    seed: z.number().int().min(0).max(0xffffffff).default(1),
    loops: z.array(loopSchema).default([]),
    events: z.array(eventSchema).default([]),
  })
  .superRefine((scenario, ctx) => {
    const seen = new Map<number, number>();
    scenario.loops.forEach((loop, i) => {
      if (loop.input > scenario.decoder.inputs) {
        ctx.addIssue({ code: 'custom', path: ['loops', i, 'input'], message: `${loop.input} is past the decoder's ${scenario.decoder.inputs} inputs` });
      }
      const earlier = seen.get(loop.input);
      if (earlier !== undefined) ctx.addIssue({ code: 'custom', path: ['loops', i, 'input'], message: `input ${loop.input} is already used by loops[${earlier}]` });
      else seen.set(loop.input, i);
      if (loop.pulse_ms >= loop.period_ms * (1 - loop.jitter)) {
        ctx.addIssue({ code: 'custom', path: ['loops', i, 'pulse_ms'], message: `must be shorter than the shortest interval (${loop.period_ms * (1 - loop.jitter)} ms)` });
      }
    });
    scenario.events.forEach((event, i) => {
      if ('input' in event && !seen.has(event.input)) {
        ctx.addIssue({ code: 'custom', path: ['events', i, 'input'], message: `no loop is on input ${event.input}` });
      }
      if (event.action === 'noise' && event.glitch_us[0] > event.glitch_us[1]) {
        ctx.addIssue({ code: 'custom', path: ['events', i, 'glitch_us'], message: 'give [shortest, longest] glitch in µs' });
      }
    });
    const wrap = scenario.decoder.wrap_clock_after;
    if (wrap !== undefined && (wrap < 0 || wrap * 1000 >= 2 ** 32)) {
      ctx.addIssue({ code: 'custom', path: ['decoder', 'wrap_clock_after'], message: 'must be under 4294 s (one turn of the 32-bit µs clock)' });
    }
  });

export type ScenarioInput = z.input<typeof scenarioSchema>;
export type Scenario = z.output<typeof scenarioSchema>;
export type ScenarioLoop = Scenario['loops'][number];
export type ScenarioEvent = Scenario['events'][number];

import { encodeLine } from '../../src/protocol/encodeLine.js';
import type { Band } from '../../src/model/band.js';

/**
 * Writes decoder protocol lines for a test, by hand-chosen decoder times, so that expected state
 * times can be worked out on paper: pulses(…) at exact instants, ticks, cuts and shorts.
 * Sequence numbers are given in time order when the script is built.
 */
type Item = { atUs: number; order: number; body: (seq: number) => string; counts: boolean; apply?: (bands: Band[]) => void };

export function wireScript(inputs: number, options: { firmware?: string; timeOffsetUs?: number } = {}) {
  const items: Item[] = [];
  let order = 0;
  const offset = options.timeOffsetUs ?? 0;
  const raw = (us: number) => (us + offset) % 2 ** 32;
  const script = {
    hello(atUs: number) {
      items.push({ atUs, order: order++, counts: false, body: () => `HELLO 1 ${inputs} ${options.firmware ?? 'test-1'}` });
      return script;
    },
    edge(atUs: number, input: number, band: Band) {
      items.push({ atUs, order: order++, counts: true, body: (seq) => `EDGE ${seq} ${raw(atUs)} ${input} ${band}`, apply: (b) => (b[input - 1] = band) });
      return script;
    },
    /** One pulse N→H→N of `widthUs` starting at `atUs`. */
    pulse(atUs: number, input: number, widthUs = 1000) {
      return script.edge(atUs, input, 'H').edge(atUs + widthUs, input, 'N');
    },
    /** Pulses every `periodUs` from `fromUs` while the start is before `untilUs`. */
    pulses(input: number, fromUs: number, untilUs: number, periodUs = 500_000, widthUs = 1000) {
      for (let t = fromUs; t < untilUs; t += periodUs) script.pulse(t, input, widthUs);
      return script;
    },
    /** TICKs every `stepUs` in [fromUs, untilUs]. */
    ticks(fromUs: number, untilUs: number, stepUs = 200_000) {
      for (let t = fromUs; t <= untilUs; t += stepUs) {
        items.push({ atUs: t, order: 1e9 + order++, counts: true, body: () => '' });
      }
      return script;
    },
    /** Lines in time order, each with its decoder time. */
    build(): Array<{ atUs: number; line: string }> {
      const sorted = [...items].sort((a, b) => a.atUs - b.atUs || a.order - b.order);
      const bands: Band[] = Array.from({ length: inputs }, () => 'N');
      let seq = 0;
      const out: Array<{ atUs: number; line: string }> = [];
      for (const item of sorted) {
        let body = item.body(seq);
        if (body === '') body = `TICK ${seq} ${raw(item.atUs)} ${bands.join('')}`;
        if (item.counts) seq = (seq + 1) % 65536;
        item.apply?.(bands);
        out.push({ atUs: item.atUs, line: encodeLine(body).replace(/\n$/, '') });
      }
      return out;
    },
  };
  return script;
}

import type { Band } from '../model/band.js';
import { crc16CcittFalse, crcHex } from '../protocol/crc16.js';
import { sealBody } from '../protocol/encodeLine.js';
import { SEQ_MODULO, TIME_MODULO } from '../protocol/frame.js';
import type { Scenario, ScenarioEvent } from './scenarioSchema.js';
import { createSeededRandom, deriveSeed, type SeededRandom } from './seededRandom.js';
import { createTimeQueue } from './timeQueue.js';

/** One protocol line the simulated decoder sent, at simulation time `atUs` (µs since it started). */
export interface SimLine {
  atUs: number;
  /** `BODY*CCCC` without the LF. */
  line: string;
}

export interface Simulator {
  /** Everything the decoder sends up to and including `untilUs`, in order. Calls must not go back in time. */
  advanceTo(untilUs: number): SimLine[];
  /** Simulation time generated so far. */
  readonly nowUs: number;
  /** When the next line-producing happening is due (for a real-time shell to sleep until). */
  nextAtUs(): number;
}

/** Which comes first when several things happen in the same µs: the timeline, then the wire, then TICK. */
const RANK = { event: 0, wire: 1, tick: 2 } as const;

type Happening =
  | { atUs: number; rank: number; kind: 'event'; event: ScenarioEvent }
  | { atUs: number; rank: number; kind: 'pulse-start' | 'pulse-end'; input: number }
  | { atUs: number; rank: number; kind: 'glitch-start'; input: number; untilUs: number; rateHz: number; widthUs: readonly [number, number] }
  | { atUs: number; rank: number; kind: 'glitch-end'; input: number }
  | { atUs: number; rank: number; kind: 'tick' };

interface WireModel {
  periodUs: number;
  pulseUs: number;
  jitter: number;
  random: SeededRandom;
  frozen: boolean;
  cut: boolean;
  shorted: boolean;
  pulsing: boolean;
  glitches: number;
  band: Band;
}

/**
 * A simulated line decoder, deterministic for its scenario and seed. It models each loop's wire (the
 * node's heartbeat pulses, cuts, shorts, glitches) and writes the protocol v1 lines a decoder would:
 * HELLO at start, an EDGE for every band change, a TICK every tick_ms. After the last timed event the
 * loops keep their last behaviour for ever.
 */
export function createSimulator(scenario: Scenario): Simulator {
  const inputs = scenario.decoder.inputs;
  const tickUs = scenario.decoder.tick_ms * 1000;
  const queue = createTimeQueue<Happening>();
  const wires = new Map<number, WireModel>();
  const corruptRandom = createSeededRandom(deriveSeed(scenario.seed, 1000));

  let nowUs = 0;
  let started = false;
  let seq = 0;
  let framesToSwallow = 0;
  let corruptUntilUs = -1;
  let corruptFraction = 0;
  // Raw decoder clock = (clockOffsetUs + t − clockBaseUs) mod 2^32.
  let clockOffsetUs = scenario.decoder.wrap_clock_after !== undefined ? TIME_MODULO - Math.round(scenario.decoder.wrap_clock_after * 1000) : 0;
  let clockBaseUs = 0;
  let out: SimLine[] = [];

  for (const loop of scenario.loops) {
    const random = createSeededRandom(deriveSeed(scenario.seed, loop.input));
    const wire: WireModel = {
      periodUs: Math.round(loop.period_ms * 1000),
      pulseUs: Math.max(1, Math.round(loop.pulse_ms * 1000)),
      jitter: loop.jitter,
      random,
      frozen: false,
      cut: false,
      shorted: false,
      pulsing: false,
      glitches: 0,
      band: 'N',
    };
    wires.set(loop.input, wire);
    // Nodes are not in step with each other: each starts at its own phase.
    queue.push({ atUs: 1 + Math.floor(random.next() * wire.periodUs), rank: RANK.wire, kind: 'pulse-start', input: loop.input });
  }
  scenario.events.forEach((event) => queue.push({ atUs: Math.round(event.at * 1000), rank: RANK.event, kind: 'event', event }));
  queue.push({ atUs: tickUs, rank: RANK.tick, kind: 'tick' });

  const rawTime = (atUs: number) => (((clockOffsetUs + atUs - clockBaseUs) % TIME_MODULO) + TIME_MODULO) % TIME_MODULO;

  function send(atUs: number, body: string): void {
    let line = sealBody(body);
    if (atUs < corruptUntilUs && corruptRandom.next() < corruptFraction) {
      // A wrong checksum that is never the right one: XOR with a non-zero value.
      const wrong = crc16CcittFalse(body) ^ (1 + Math.floor(corruptRandom.next() * 0xfffe));
      line = `${body}*${crcHex(wrong & 0xffff)}`;
    }
    out.push({ atUs, line });
  }

  function sendFrame(atUs: number, type: string, rest: string): void {
    const frameSeq = seq;
    seq = (seq + 1) % SEQ_MODULO;
    if (framesToSwallow > 0) {
      framesToSwallow--;
      return;
    }
    send(atUs, `${type} ${frameSeq} ${rawTime(atUs)} ${rest}`);
  }

  function hello(atUs: number): void {
    send(atUs, `HELLO 1 ${inputs} ${scenario.decoder.firmware}`);
  }

  function bandOf(input: number): Band {
    const wire = wires.get(input);
    // An input with nothing wired to it carries no current.
    return wire ? wire.band : 'O';
  }

  function settle(atUs: number, input: number, wire: WireModel): void {
    const band: Band = wire.cut ? 'O' : wire.shorted || wire.pulsing || wire.glitches > 0 ? 'H' : 'N';
    if (band === wire.band) return;
    wire.band = band;
    sendFrame(atUs, 'EDGE', `${input} ${band}`);
  }

  function nextInterval(wire: WireModel): number {
    return Math.max(1, Math.round(wire.periodUs * (1 + wire.jitter * (2 * wire.random.next() - 1))));
  }

  function scheduleGlitch(fromUs: number, input: number, untilUs: number, rateHz: number, widthUs: readonly [number, number], random: SeededRandom): void {
    // Poisson arrivals: exponential gaps with mean 1/rate.
    const gapUs = Math.max(1, Math.round((-Math.log(1 - random.next()) / rateHz) * 1e6));
    const atUs = fromUs + gapUs;
    if (atUs < untilUs) queue.push({ atUs, rank: RANK.wire, kind: 'glitch-start', input, untilUs, rateHz, widthUs });
  }

  function applyEvent(atUs: number, event: ScenarioEvent): void {
    switch (event.action) {
      case 'lose-frames':
        framesToSwallow += event.count;
        return;
      case 'restart':
        seq = 0;
        clockOffsetUs = 0;
        clockBaseUs = atUs;
        hello(atUs);
        return;
      case 'corrupt':
        corruptUntilUs = Math.max(corruptUntilUs, atUs + Math.round(event.for * 1000));
        corruptFraction = event.fraction;
        return;
      default:
        break;
    }
    const wire = wires.get(event.input)!;
    switch (event.action) {
      case 'freeze':
        wire.frozen = true;
        break;
      case 'thaw':
        wire.frozen = false;
        break;
      case 'cut':
        wire.cut = true;
        break;
      case 'repair':
        wire.cut = false;
        break;
      case 'short':
        wire.shorted = true;
        break;
      case 'clear-short':
        wire.shorted = false;
        break;
      case 'noise':
        scheduleGlitch(atUs, event.input, atUs + Math.round(event.for * 1000), event.rate_hz, event.glitch_us, wire.random);
        break;
    }
    settle(atUs, event.input, wire);
  }

  function handle(h: Happening): void {
    switch (h.kind) {
      case 'event':
        applyEvent(h.atUs, h.event);
        return;
      case 'tick': {
        let bands = '';
        for (let input = 1; input <= inputs; input++) bands += bandOf(input);
        sendFrame(h.atUs, 'TICK', bands);
        queue.push({ atUs: h.atUs + tickUs, rank: RANK.tick, kind: 'tick' });
        return;
      }
      default:
        break;
    }
    const wire = wires.get(h.input)!;
    switch (h.kind) {
      case 'pulse-start':
        // The node keeps its rhythm while frozen or unpowered; it just does not pull the line.
        queue.push({ atUs: h.atUs + nextInterval(wire), rank: RANK.wire, kind: 'pulse-start', input: h.input });
        if (wire.frozen || wire.cut) return;
        wire.pulsing = true;
        queue.push({ atUs: h.atUs + wire.pulseUs, rank: RANK.wire, kind: 'pulse-end', input: h.input });
        break;
      case 'pulse-end':
        wire.pulsing = false;
        break;
      case 'glitch-start': {
        wire.glitches++;
        const [shortest, longest] = h.widthUs;
        const widthUs = shortest + Math.floor(wire.random.next() * (longest - shortest + 1));
        queue.push({ atUs: h.atUs + widthUs, rank: RANK.wire, kind: 'glitch-end', input: h.input });
        scheduleGlitch(h.atUs, h.input, h.untilUs, h.rateHz, h.widthUs, wire.random);
        break;
      }
      case 'glitch-end':
        wire.glitches--;
        break;
    }
    settle(h.atUs, h.input, wire);
  }

  return {
    advanceTo(untilUs) {
      out = [];
      if (!started) {
        started = true;
        hello(0);
      }
      for (let next = queue.peek(); next && next.atUs <= untilUs; next = queue.peek()) {
        queue.pop();
        handle(next);
      }
      nowUs = Math.max(nowUs, untilUs);
      return out;
    },
    get nowUs() {
      return nowUs;
    },
    nextAtUs() {
      return started ? (queue.peek()?.atUs ?? Number.POSITIVE_INFINITY) : 0;
    },
  };
}

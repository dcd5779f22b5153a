import { execFile, execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import type { Band } from '../src/model/band.js';
import { parseLine } from '../src/protocol/parseLine.js';
import { createSimulator } from '../src/sim/createSimulator.js';
import type { Scenario } from '../src/sim/scenarioSchema.js';
import { findPackageRoot } from '../src/store/openDatabase.js';
import { LOOP_PINS, levelsFor } from './firmwarePins.js';

/**
 * Runs the real decoder firmware (.elf) under simavr through tests/firmware/harness.c: builds both
 * with the firmware's Makefile (under flock, so parallel test files never build at once), writes the harness script (pin changes at exact cycles), and reads
 * back every UART byte with its cycle. Shared by tests/firmware and bench/firmware.bench.ts.
 */
export const F_CPU = 16_000_000;
export const CYCLES_PER_US = F_CPU / 1_000_000;
export const FIRMWARE_DIR = join(findPackageRoot(), 'firmware', 'decoder');
export const ELF = join(FIRMWARE_DIR, 'build', 'decoder.elf');
export const HARNESS = join(FIRMWARE_DIR, 'build', 'harness');
/** Waveforms start this long after reset, once the firmware's clock runs (it starts within 1 ms). */
export const LEAD_US = 10_000;
export const LOOPS = 8;

let built = false;
/** `make -C firmware/decoder all harness`, once per process (make itself skips what is up to date). */
export function buildFirmware(): void {
  if (built) return;
  execFileSync('flock', [join(tmpdir(), 'pairwatch-firmware-build.lock'), 'make', '-s', '-C', FIRMWARE_DIR, 'all', 'harness'], { stdio: ['ignore', 'ignore', 'pipe'] });
  built = true;
}

/** Addresses of the firmware's test hooks, from avr-nm (flash addresses as is, RAM without 0x800000). */
export function firmwareSymbols(): Map<string, number> {
  buildFirmware();
  const out = execFileSync('avr-nm', [ELF], { encoding: 'utf8' });
  const map = new Map<string, number>();
  for (const line of out.split('\n')) {
    const [addr, , name] = line.trim().split(/\s+/);
    if (addr && name) map.set(name, parseInt(addr, 16) & 0xffff);
  }
  return map;
}

export interface BandStep {
  /** µs after the waveform's start (which is LEAD_US after reset). */
  atUs: number;
  loop: number;
  band: Band;
}

export interface Waveform {
  initial: Band[];
  steps: BandStep[];
}

/**
 * The band changes pairwatch's own simulator (src/sim) makes for a scenario between fromUs and
 * untilUs: its EDGE lines, at their simulation times, re-based to fromUs. Bands before fromUs give
 * the starting levels. Scenarios used here must not lose or corrupt frames (the truth is every EDGE).
 */
export function waveformFromScenario(scenario: Scenario, fromUs: number, untilUs: number): Waveform {
  const wired = new Set(scenario.loops.map((l) => l.input));
  const initial: Band[] = Array.from({ length: LOOPS }, (_, i) => (wired.has(i + 1) ? 'N' : 'O'));
  const steps: BandStep[] = [];
  for (const { atUs, line } of createSimulator(scenario).advanceTo(untilUs)) {
    const parsed = parseLine(line);
    if (!parsed.ok || parsed.frame.type !== 'EDGE') continue;
    if (atUs < fromUs) initial[parsed.frame.loop - 1] = parsed.frame.band;
    else steps.push({ atUs: atUs - fromUs, loop: parsed.frame.loop, band: parsed.frame.band });
  }
  return { initial, steps };
}

export interface FirmwareRunOptions {
  waveform: Waveform;
  /** Simulated run length after the waveform's start, µs. */
  untilUs: number;
  /** Start the firmware's clock at this µs value (written into flash before the first instruction). */
  clockStartUs?: number;
  /** Set the firmware's hang hook at this waveform µs: the main loop stops, the watchdog must restart it. */
  hangAtUs?: number;
  /** Supply changes, in mV, at waveform µs. */
  supply?: Array<{ atUs: number; mv: number }>;
  /** Also write the UART bytes, as they are sent, into this file (a pseudo-terminal). */
  live?: string;
}

export interface CapturedLine {
  /** Cycle the LF left the UART. */
  cycle: number;
  text: string;
}

export interface Capture {
  lines: CapturedLine[];
  bytes: Array<{ cycle: number; byte: number }>;
  resets: number[];
  /** Cycles at which TCCR1B got its clock bits (the firmware's clock started), one per (re)start. */
  clockStarts: number[];
  /** Pin changes as they reached the MCU. */
  pins: Array<{ cycle: number; port: string; bit: number; level: number }>;
  endCycle: number;
  clockStartUs: number;
}

const run = promisify(execFile);

export const usToCycle = (us: number) => Math.round((LEAD_US + us) * CYCLES_PER_US);

export async function runFirmware(options: FirmwareRunOptions): Promise<Capture> {
  buildFirmware();
  const script: string[] = [`until ${usToCycle(options.untilUs)}`];
  const clockStartUs = options.clockStartUs ?? 0;
  if (clockStartUs !== 0) {
    const addr = firmwareSymbols().get('clock_start_us')!;
    const bytes = [0, 8, 16, 24].map((s) => ((clockStartUs >>> s) & 0xff).toString(16));
    script.push(`flash ${addr.toString(16)} ${bytes.join(' ')}`);
  }
  const levels = new Map<string, number>();
  const set = (cycle: number, pin: { port: string; bit: number }, level: number) => {
    const key = `${pin.port}${pin.bit}`;
    if (cycle !== 0 && levels.get(key) === level) return;
    levels.set(key, level);
    return `pin ${cycle} ${pin.port} ${pin.bit} ${level}`;
  };
  const timed: Array<{ cycle: number; text: string }> = [];
  options.waveform.initial.forEach((band, i) => {
    const l = levelsFor(band);
    script.push(set(0, LOOP_PINS[i]!.standby, l.standby)!, set(0, LOOP_PINS[i]!.pulse, l.pulse)!);
  });
  for (const step of options.waveform.steps) {
    const cycle = usToCycle(step.atUs);
    const l = levelsFor(step.band);
    const pins = LOOP_PINS[step.loop - 1]!;
    for (const [pin, level] of [
      [pins.standby, l.standby],
      [pins.pulse, l.pulse],
    ] as const) {
      const text = set(cycle, pin, level);
      if (text) timed.push({ cycle, text });
    }
  }
  if (options.hangAtUs !== undefined) timed.push({ cycle: usToCycle(options.hangAtUs), text: `poke ${usToCycle(options.hangAtUs)} ${firmwareSymbols().get('hang_for_test')!.toString(16)} 1` });
  for (const s of options.supply ?? []) timed.push({ cycle: usToCycle(s.atUs), text: `supply ${usToCycle(s.atUs)} ${s.mv}` });
  timed.sort((a, b) => a.cycle - b.cycle);
  script.push(...timed.map((t) => t.text));

  const dir = mkdtempSync(join(tmpdir(), 'pw-fw-'));
  try {
    writeFileSync(join(dir, 'script'), `${script.join('\n')}\n`);
    await run(HARNESS, [ELF, join(dir, 'script'), join(dir, 'capture'), ...(options.live ? [options.live] : [])], { maxBuffer: 1 << 20 });
    return parseCapture(readFileSync(join(dir, 'capture'), 'utf8'), clockStartUs);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

export function parseCapture(text: string, clockStartUs: number): Capture {
  const capture: Capture = { lines: [], bytes: [], resets: [], clockStarts: [], pins: [], endCycle: 0, clockStartUs };
  let partial = '';
  for (const record of text.split('\n')) {
    const f = record.split(' ');
    switch (f[0]) {
      case 'tx': {
        const cycle = Number(f[1]);
        const byte = Number(f[2]);
        capture.bytes.push({ cycle, byte });
        if (byte === 10) {
          capture.lines.push({ cycle, text: partial });
          partial = '';
        } else partial += String.fromCharCode(byte);
        break;
      }
      case 'reset':
        capture.resets.push(Number(f[1]));
        break;
      case 'timer':
        if ((Number(f[2]) & 0x07) !== 0) capture.clockStarts.push(Number(f[1]));
        break;
      case 'pin':
        capture.pins.push({ cycle: Number(f[1]), port: f[2]!, bit: Number(f[3]), level: Number(f[4]) });
        break;
      case 'end':
        capture.endCycle = Number(f[1]);
        break;
    }
  }
  return capture;
}

/**
 * The firmware's clock at a cycle, by the datasheet's timer arithmetic rather than anything the
 * firmware says: Timer 1 at F_CPU/8 counts 0.5 µs, started at the cycle TCCR1B got its clock bits,
 * from the flashed start value; the 32-bit µs time wraps.
 */
export function firmwareTimeAt(capture: Capture, cycle: number): number {
  const start = [...capture.clockStarts].reverse().find((c) => c <= cycle);
  if (start === undefined) throw new Error(`cycle ${cycle} is before the firmware's clock started`);
  const afterRestart = capture.clockStarts.indexOf(start) > 0;
  const base = afterRestart ? 0 : capture.clockStartUs;
  return (base + Math.floor(Math.floor((cycle - start) / 8) / 2)) % 2 ** 32;
}

/** The band changes as they reached the MCU, per loop, with the firmware time they should carry. */
export function truthFromPins(capture: Capture, initial: readonly Band[]): Array<{ loop: number; band: Band; cycle: number; timeUs: number }> {
  const level = new Map<string, number>();
  initial.forEach((band, i) => {
    const l = levelsFor(band);
    const p = LOOP_PINS[i]!;
    level.set(`${p.standby.port}${p.standby.bit}`, l.standby);
    level.set(`${p.pulse.port}${p.pulse.bit}`, l.pulse);
  });
  const bandOf = (loop: number): Band => {
    const p = LOOP_PINS[loop - 1]!;
    if (level.get(`${p.pulse.port}${p.pulse.bit}`) === 1) return 'H';
    return level.get(`${p.standby.port}${p.standby.bit}`) === 1 ? 'N' : 'O';
  };
  const out: Array<{ loop: number; band: Band; cycle: number; timeUs: number }> = [];
  const byCycle = new Map<number, typeof capture.pins>();
  for (const p of capture.pins) byCycle.set(p.cycle, [...(byCycle.get(p.cycle) ?? []), p]);
  for (const [cycle, pins] of [...byCycle.entries()].sort((a, b) => a[0] - b[0])) {
    const before = Array.from({ length: LOOPS }, (_, i) => bandOf(i + 1));
    for (const p of pins) level.set(`${p.port}${p.bit}`, p.level);
    for (let loop = 1; loop <= LOOPS; loop++) {
      const band = bandOf(loop);
      if (band !== before[loop - 1]) out.push({ loop, band, cycle, timeUs: firmwareTimeAt(capture, cycle) });
    }
  }
  return out;
}

import { isBand } from '../model/band.js';
import { crc16CcittFalse, crcHex } from './crc16.js';
import { FAULT_CODES, MAX_LINE_BYTES, SEQ_MODULO, TIME_MODULO } from './frame.js';
import { parseLine, utf8Length } from './parseLine.js';

/**
 * Protocol v1 conformance of a decoder's stream, rule by rule, for anyone building a decoder: feed it
 * every line as received (`checkLine`), then `judgeConformance` says for each rule of the README's
 * "Decoder protocol, version 1" whether the stream kept it, with the first line that broke it.
 * Pure: no clock, no port. Time rules are judged on the decoder's own time field.
 */
export const CONFORMANCE_RULES = ['hello', 'line-length', 'crc', 'syntax', 'seq', 'tick-cadence', 'time', 'bands', 'fault-codes'] as const;
export type ConformanceRule = (typeof CONFORMANCE_RULES)[number];

const TITLES: Record<ConformanceRule, string> = {
  hello: 'HELLO first, version 1',
  'line-length': `lines at most ${MAX_LINE_BYTES} bytes`,
  crc: 'CRC-16/CCITT-FALSE on every line',
  syntax: 'frame syntax',
  seq: 'seq continuous, from 0 after HELLO',
  'tick-cadence': 'TICK at least every 250 ms',
  time: 'time monotonic, wrapping at 2^32',
  bands: 'band letters O/N/H, one per loop',
  'fault-codes': `FAULT codes ${FAULT_CODES.join('/')}`,
};

/** The protocol's slowest TICK (README: "sent at least every 250 ms"). */
export const MAX_TICK_GAP_US = 250_000;
const HALF_WRAP = TIME_MODULO / 2;

interface RuleTally {
  readonly failures: number;
  readonly first: string | null;
}

export interface ConformanceState {
  readonly lines: number;
  readonly rules: Readonly<Record<ConformanceRule, RuleTally>>;
  readonly hello: { readonly loops: number; readonly firmware: string } | null;
  readonly hellos: number;
  readonly framesBeforeHello: number;
  readonly expectedSeq: number | null;
  readonly lastRawTime: number | null;
  /** Decoder time since the last HELLO, unwrapped. */
  readonly elapsedUs: number;
  readonly lastTickUs: number | null;
  readonly longestTickGapUs: number;
  readonly ticks: number;
  readonly wraps: number;
  readonly longestLine: number;
  readonly faults: Readonly<Record<string, number>>;
}

export interface ConformanceVerdict {
  rule: ConformanceRule;
  title: string;
  pass: boolean;
  detail: string;
}

export function initialConformance(): ConformanceState {
  return {
    lines: 0,
    rules: Object.fromEntries(CONFORMANCE_RULES.map((r) => [r, { failures: 0, first: null }])) as Record<ConformanceRule, RuleTally>,
    hello: null,
    hellos: 0,
    framesBeforeHello: 0,
    expectedSeq: null,
    lastRawTime: null,
    elapsedUs: 0,
    lastTickUs: null,
    longestTickGapUs: 0,
    ticks: 0,
    wraps: 0,
    longestLine: 0,
    faults: {},
  };
}

/** Lines the link threw away unread because they ran past the length limit. */
export function noteOverlong(state: ConformanceState, count: number): ConformanceState {
  let next = state;
  for (let i = 0; i < count; i++) {
    next = { ...next, lines: next.lines + 1 };
    next = fail(next, 'line-length', `line ${next.lines}: longer than ${MAX_LINE_BYTES} bytes`);
  }
  return next;
}

export function checkLine(state: ConformanceState, rawLine: string): ConformanceState {
  let s: ConformanceState = { ...state, lines: state.lines + 1 };
  const where = `line ${s.lines} "${shorten(rawLine)}"`;
  const bytes = utf8Length(rawLine);
  s = { ...s, longestLine: Math.max(s.longestLine, bytes) };
  if (bytes > MAX_LINE_BYTES) return fail(s, 'line-length', `${where}: ${bytes} bytes`);

  const text = rawLine.endsWith('\r') ? rawLine.slice(0, -1) : rawLine;
  const star = text.lastIndexOf('*');
  const given = text.slice(star + 1);
  if (star < 0 || !/^[0-9A-Fa-f]{4}$/.test(given)) return fail(s, 'crc', `${where}: does not end in *CCCC`);
  const body = text.slice(0, star);
  const computed = crc16CcittFalse(body);
  if (parseInt(given, 16) !== computed) return fail(s, 'crc', `${where}: checksum ${given}, computed ${crcHex(computed)}`);

  const fields = body.split(' ');
  const contentFailure = checkContent(s, fields);
  if (contentFailure) s = fail(s, contentFailure.rule, `${where}: ${contentFailure.why}`);

  const parsed = parseLine(rawLine);
  if (!parsed.ok) return contentFailure ? s : fail(s, 'syntax', `${where}: ${parsed.detail}`);
  const frame = parsed.frame;

  if (frame.type === 'HELLO') {
    if (s.hellos === 0 && s.framesBeforeHello > 0) s = fail(s, 'hello', `${s.framesBeforeHello} frame(s) came before the first HELLO`);
    return { ...s, hello: { loops: frame.loops, firmware: frame.firmware }, hellos: s.hellos + 1, expectedSeq: 0, lastRawTime: null, elapsedUs: 0, lastTickUs: null };
  }
  if (contentFailure) return s;
  // Stryker disable next-line ConditionalExpression: the count is only read while no HELLO has come, so counting on after one changes nothing
  if (s.hellos === 0) s = { ...s, framesBeforeHello: s.framesBeforeHello + 1 };

  if (s.expectedSeq !== null && frame.seq !== s.expectedSeq) s = fail(s, 'seq', `${where}: seq ${frame.seq}, expected ${s.expectedSeq}`);
  s = { ...s, expectedSeq: (frame.seq + 1) % SEQ_MODULO };

  if (s.lastRawTime !== null) {
    const forward = (frame.time - s.lastRawTime + TIME_MODULO) % TIME_MODULO;
    if (forward >= HALF_WRAP) {
      s = fail(s, 'time', `${where}: time went back from ${s.lastRawTime} to ${frame.time} without a HELLO`);
    } else {
      s = { ...s, elapsedUs: s.elapsedUs + forward, wraps: s.wraps + (frame.time < s.lastRawTime ? 1 : 0) };
    }
  }
  s = { ...s, lastRawTime: frame.time };

  if (frame.type === 'TICK') {
    if (s.lastTickUs !== null) {
      const gap = s.elapsedUs - s.lastTickUs;
      if (gap > MAX_TICK_GAP_US) s = fail(s, 'tick-cadence', `${where}: ${(gap / 1000).toFixed(1)} ms after the TICK before`);
      s = { ...s, longestTickGapUs: Math.max(s.longestTickGapUs, gap) };
    }
    s = { ...s, lastTickUs: s.elapsedUs, ticks: s.ticks + 1 };
  }
  if (frame.type === 'FAULT') s = { ...s, faults: { ...s.faults, [frame.code]: (s.faults[frame.code] ?? 0) + 1 } };
  return s;
}

/** Band letters and FAULT codes are judged before the generic parse, so each break lands on its own rule. */
function checkContent(s: ConformanceState, fields: string[]): { rule: ConformanceRule; why: string } | null {
  const loops = s.hello?.loops;
  switch (fields[0]) {
    case 'EDGE': {
      if (fields.length !== 5) return null;
      if (!isBand(fields[4]!)) return { rule: 'bands', why: `band "${fields[4]}" is not O, N or H` };
      const loop = Number(fields[3]);
      if (loops !== undefined && /^[0-9]+$/.test(fields[3]!) && (loop < 1 || loop > loops)) return { rule: 'bands', why: `loop ${fields[3]} is not one of the ${loops} announced` };
      return null;
    }
    case 'TICK': {
      if (fields.length !== 4) return null;
      const bands = fields[3]!;
      const bad = [...bands].findIndex((c) => !isBand(c));
      if (bad >= 0) return { rule: 'bands', why: `band "${bands[bad]}" of loop ${bad + 1} is not O, N or H` };
      if (loops !== undefined && bands.length !== loops) return { rule: 'bands', why: `${bands.length} bands, but HELLO announced ${loops} loops` };
      return null;
    }
    case 'FAULT':
      if (fields.length === 4 && !(FAULT_CODES as readonly string[]).includes(fields[3]!)) return { rule: 'fault-codes', why: `code "${fields[3]}" is not one of ${FAULT_CODES.join(', ')}` };
      return null;
    default:
      return null;
  }
}

function fail(s: ConformanceState, rule: ConformanceRule, why: string): ConformanceState {
  const tally = s.rules[rule];
  return { ...s, rules: { ...s.rules, [rule]: { failures: tally.failures + 1, first: tally.first ?? why } } };
}

function shorten(line: string): string {
  const printable = line.replace(/[^\x20-\x7e]/g, '?');
  return printable.length > 48 ? `${printable.slice(0, 45)}...` : printable;
}

/** One verdict per rule, in CONFORMANCE_RULES order. A stream with no lines fails every rule. */
export function judgeConformance(s: ConformanceState): ConformanceVerdict[] {
  const failed = (rule: ConformanceRule): ConformanceVerdict | null => {
    const t = s.rules[rule];
    return t.failures > 0 ? verdict(rule, false, `${t.failures} failure(s); first: ${t.first}`) : null;
  };
  const none = (rule: ConformanceRule) => verdict(rule, false, 'no lines received');
  const out: ConformanceVerdict[] = [];
  for (const rule of CONFORMANCE_RULES) {
    if (s.lines === 0) {
      out.push(none(rule));
      continue;
    }
    const f = failed(rule);
    if (f) {
      out.push(f);
      continue;
    }
    switch (rule) {
      case 'hello':
        out.push(
          s.hello
            ? verdict(rule, true, `HELLO 1 ${s.hello.loops} ${s.hello.firmware} (${s.hellos} seen)`)
            : verdict(rule, false, 'no HELLO seen: restart the decoder while this runs (opening the port restarts most boards)'),
        );
        break;
      case 'line-length':
        out.push(verdict(rule, true, `${s.lines} lines, longest ${s.longestLine} bytes`));
        break;
      case 'crc':
        out.push(verdict(rule, true, 'every checksum right'));
        break;
      case 'syntax':
        out.push(verdict(rule, true, 'every line parsed'));
        break;
      case 'seq':
        out.push(verdict(rule, true, s.expectedSeq === null ? 'no EDGE, TICK or FAULT to number' : 'no gaps'));
        break;
      case 'tick-cadence': {
        const tail = s.lastTickUs === null ? null : s.elapsedUs - s.lastTickUs;
        if (s.ticks === 0) out.push(verdict(rule, false, 'no TICK seen'));
        else if (tail !== null && tail > MAX_TICK_GAP_US) out.push(verdict(rule, false, `the last TICK was ${(tail / 1000).toFixed(1)} ms before the last frame`));
        else out.push(verdict(rule, true, `${s.ticks} TICKs, longest gap ${(s.longestTickGapUs / 1000).toFixed(1)} ms`));
        break;
      }
      case 'time':
        out.push(verdict(rule, true, `${(s.elapsedUs / 1e6).toFixed(3)} s of decoder time, ${s.wraps === 0 ? 'no wrap crossed in this run' : `crossed the 32-bit wrap ${s.wraps} time(s)`}`));
        break;
      case 'bands':
        out.push(verdict(rule, true, 'every band a letter O, N or H'));
        break;
      case 'fault-codes': {
        const seen = Object.entries(s.faults).map(([code, n]) => `${code} ×${n}`);
        out.push(verdict(rule, true, seen.length === 0 ? 'no FAULT sent' : seen.join(', ')));
        break;
      }
    }
  }
  return out;
}

function verdict(rule: ConformanceRule, pass: boolean, detail: string): ConformanceVerdict {
  return { rule, title: TITLES[rule], pass, detail };
}

/** The report as printed: one line per rule. */
export function formatVerdicts(verdicts: readonly ConformanceVerdict[]): string[] {
  const width = Math.max(...verdicts.map((v) => v.title.length));
  return verdicts.map((v) => `${v.pass ? 'pass' : 'FAIL'}  ${v.title.padEnd(width)}  ${v.detail}`);
}

import { describe, expect, it } from 'vitest';
import { checkLine, CONFORMANCE_RULES, formatVerdicts, initialConformance, judgeConformance, noteOverlong } from '../../src/protocol/conformance.js';
import { encodeLine } from '../../src/protocol/encodeLine.js';
import { refLine } from './referenceLine.js';

const seal = (body: string) => encodeLine(body).slice(0, -1);
const judge = (lines: string[], overlong = 0) => judgeConformance(noteOverlong(lines.reduce((s, l) => checkLine(s, l), initialConformance()), overlong));

/** A stream that keeps every rule: HELLO, then TICKs 200 ms apart with edges between, across the wrap. */
function goodStream(): string[] {
  const start = 2 ** 32 - 300_000;
  const at = (us: number) => (start + us) % 2 ** 32;
  return [
    seal('HELLO 1 4 bench-1'),
    seal(`TICK 0 ${at(0)} NNOO`),
    seal(`EDGE 1 ${at(100_000)} 1 H`),
    seal(`EDGE 2 ${at(101_000)} 1 N`),
    seal(`TICK 3 ${at(200_000)} NNOO`),
    seal(`FAULT 4 ${at(300_000)} SUPPLY`),
    seal(`TICK 5 ${at(400_000)} NNOO`),
  ];
}

describe('protocol v1 conformance, rule by rule', () => {
  it('passes a stream that keeps every rule, and says it crossed the wrap', () => {
    const verdicts = judge(goodStream());
    expect(verdicts.map((v) => v.rule)).toEqual([...CONFORMANCE_RULES]);
    expect(verdicts.filter((v) => !v.pass)).toEqual([]);
    expect(verdicts.find((v) => v.rule === 'time')!.detail).toMatch(/crossed the 32-bit wrap 1 time/);
  });

  it('fails every rule, each on its own line, for a deliberately broken stream', () => {
    const broken = [
      seal('EDGE 7 100 1 H'), // before any HELLO
      seal('HELLO 1 4 bench-1'),
      seal('TICK 0 1000 NNOO'),
      'EDGE 1 2000 1 H*0000', // wrong checksum
      seal('EDGE 2 3000 1 X'), // not a band
      seal('EDGE  3 4000 1 N'), // two spaces
      seal('EDGE 5 5000 2 H'), // seq jumps: lines 4-6 were unreadable, so 1 was next
      seal('EDGE 6 4500 2 N'), // time back
      seal('FAULT 7 6000 HOT'), // not a fault code
      seal('TICK 8 900000 NNOO'), // 899 ms after the TICK before
    ];
    const verdicts = judge(broken, 1);
    const failed = Object.fromEntries(verdicts.filter((v) => !v.pass).map((v) => [v.rule, v.detail]));
    expect(Object.keys(failed).sort()).toEqual([...CONFORMANCE_RULES].sort());
    expect(failed.hello).toMatch(/1 frame\(s\) came before the first HELLO/);
    expect(failed.crc).toMatch(/line 4 .*checksum 0000/);
    expect(failed.bands).toMatch(/line 5 .*band "X"/);
    expect(failed.syntax).toMatch(/line 6 /);
    expect(failed.seq).toMatch(/line 7 .*seq 5, expected 1/);
    expect(failed.time).toMatch(/line 8 .*went back from 5000 to 4500/);
    expect(failed['fault-codes']).toMatch(/line 9 .*"HOT"/);
    expect(failed['tick-cadence']).toMatch(/line 10 .* ms after the TICK before/);
    expect(failed['line-length']).toMatch(/longer than 120 bytes/);
  });

  it('fails a line over 120 bytes that reached it whole', () => {
    const long = seal(`HELLO 1 4 ${'x'.repeat(120)}`);
    expect(judge([...goodStream(), long]).find((v) => v.rule === 'line-length')!.pass).toBe(false);
  });

  it('fails every rule when nothing arrived', () => {
    expect(judge([]).every((v) => !v.pass && v.detail === 'no lines received')).toBe(true);
  });

  it('a TICK with the wrong number of bands for the HELLO fails the band rule', () => {
    const lines = [...goodStream(), seal('TICK 6 150000 NNO')];
    expect(judge(lines).find((v) => v.rule === 'bands')!.detail).toMatch(/3 bands, but HELLO announced 4/);
  });
});

/**
 * What a decoder builder reads in the report, rule by rule (README "Decoder protocol, version 1").
 * Lines here are sealed with the registry's `crc` package (refLine), and every expected figure is worked
 * out from the stream by hand: line lengths by Buffer.byteLength, times from the raw fields.
 */
describe('protocol v1 conformance: the report a decoder builder reads', () => {
  const run = (lines: string[]) => lines.reduce((s, l) => checkLine(s, l), initialConformance());
  const detail = (lines: string[], rule: string) => judgeConformance(run(lines)).find((v) => v.rule === rule)!;
  const hello = refLine('HELLO 1 4 bench-1');

  it('says for each kept rule what it saw in the stream', () => {
    const lines = goodStream();
    const longest = Math.max(...lines.map((l) => Buffer.byteLength(l)));
    const details = Object.fromEntries(judge(lines).map((v) => [v.rule, v.detail]));
    expect(details).toEqual({
      hello: 'HELLO 1 4 bench-1 (1 seen)',
      'line-length': `7 lines, longest ${longest} bytes`,
      crc: 'every checksum right',
      syntax: 'every line parsed',
      seq: 'no gaps',
      // TICKs at 0, 200 and 400 ms of decoder time.
      'tick-cadence': '3 TICKs, longest gap 200.0 ms',
      // 400 ms from the first frame to the last, the FAULT landing on raw time 0 (the wrap).
      time: '0.400 s of decoder time, crossed the 32-bit wrap 1 time(s)',
      bands: 'every band a letter O, N or H',
      'fault-codes': 'SUPPLY ×1',
    });
  });

  it('a stream of one HELLO: no TICK (a failure), no time, no FAULT; of garbage alone: nothing to number', () => {
    const details = Object.fromEntries(judge([hello]).map((v) => [v.rule, [v.pass, v.detail]]));
    expect(detail(['no frame here'], 'seq')).toMatchObject({ pass: true, detail: 'no EDGE, TICK or FAULT to number' });
    expect(details['tick-cadence']).toEqual([false, 'no TICK seen']);
    expect(details.time).toEqual([true, '0.000 s of decoder time, no wrap crossed in this run']);
    expect(details['fault-codes']).toEqual([true, 'no FAULT sent']);
  });

  it('frames and no HELLO at all fail the HELLO rule with what to do about it', () => {
    const v = detail([refLine('TICK 0 0 NNNN'), refLine('TICK 1 200000 NNNN')], 'hello');
    expect(v.pass).toBe(false);
    expect(v.detail).toMatch(/^no HELLO seen: restart the decoder/);
  });

  it('counts every HELLO, and blames frames before the first HELLO only once', () => {
    const lines = [refLine('TICK 9 0 NNNN'), hello, refLine('TICK 0 0 NNNN'), hello, refLine('TICK 0 0 NNNN')];
    expect(detail(lines, 'hello').detail).toBe('1 failure(s); first: 1 frame(s) came before the first HELLO');
    expect(detail([hello, refLine('TICK 0 0 NNNN'), hello, refLine('TICK 0 0 NNNN')], 'hello').detail).toBe('HELLO 1 4 bench-1 (2 seen)');
  });

  it('counts FAULT codes by code', () => {
    const lines = [hello, refLine('FAULT 0 0 SUPPLY'), refLine('TICK 1 100000 NNNN'), refLine('FAULT 2 150000 OVERRUN'), refLine('FAULT 3 200000 SUPPLY')];
    expect(detail(lines, 'fault-codes').detail).toBe('SUPPLY ×2, OVERRUN ×1');
    expect(detail(lines, 'tick-cadence').detail).toBe('1 TICKs, longest gap 0.0 ms');
  });

  it('TICK cadence: 250 ms between TICKs is kept, 250.001 ms is not; EDGEs do not count as TICKs', () => {
    const at = (gapUs: number) => [hello, refLine('TICK 0 0 NNNN'), refLine('EDGE 1 100000 1 H'), refLine(`TICK 2 ${gapUs} NNNN`)];
    expect(detail(at(250_000), 'tick-cadence')).toMatchObject({ pass: true, detail: '2 TICKs, longest gap 250.0 ms' });
    expect(detail(at(250_001), 'tick-cadence')).toMatchObject({ pass: false, detail: '1 failure(s); first: line 4 "TICK 2 250001 NNNN*' + refLine('TICK 2 250001 NNNN').slice(-4) + '": 250.0 ms after the TICK before' });
    // The first TICK has no TICK before it, however late after the HELLO or an EDGE it comes.
    expect(detail([hello, refLine('EDGE 0 0 1 H'), refLine('TICK 1 900000 NNNN'), refLine('TICK 2 1000000 NNNN')], 'tick-cadence').pass).toBe(true);
  });

  it('the last TICK too long before the last frame fails the cadence, with how long', () => {
    const lines = [hello, refLine('TICK 0 0 NNNN'), refLine('EDGE 1 200000 1 H'), refLine('EDGE 2 300000 1 N')];
    expect(detail(lines, 'tick-cadence')).toMatchObject({ pass: false, detail: 'the last TICK was 300.0 ms before the last frame' });
    const justInTime = [hello, refLine('TICK 0 0 NNNN'), refLine('EDGE 1 250000 1 H')];
    expect(detail(justInTime, 'tick-cadence').pass).toBe(true);
  });

  it('time: a step forward of 2^31 µs is no longer forward (README rule 0), one less is; an equal time is no wrap', () => {
    const step = (us: number) => [hello, refLine('EDGE 0 0 1 H'), refLine(`EDGE 1 ${us} 1 N`)];
    expect(detail(step(2 ** 31), 'time').detail).toBe('1 failure(s); first: line 3 "EDGE 1 2147483648 1 N*' + refLine('EDGE 1 2147483648 1 N').slice(-4) + '": time went back from 0 to 2147483648 without a HELLO');
    expect(detail(step(2 ** 31 - 1), 'time')).toMatchObject({ pass: true, detail: '2147.484 s of decoder time, no wrap crossed in this run' });
    expect(detail(step(0), 'time')).toMatchObject({ pass: true, detail: '0.000 s of decoder time, no wrap crossed in this run' });
  });

  it('an EDGE on a loop the HELLO did not announce breaks the band rule; a number that is not plain decimal is syntax', () => {
    const edge = (loop: string) => detail([hello, refLine(`EDGE 0 0 ${loop} H`)], 'bands');
    expect(edge('5').detail).toMatch(/: loop 5 is not one of the 4 announced$/);
    expect(edge('10').detail).toMatch(/: loop 10 is not one of the 4 announced$/);
    expect(edge('0').detail).toMatch(/: loop 0 is not one of the 4 announced$/);
    expect(edge('4').pass).toBe(true);
    for (const notDecimal of ['-1', '1e3']) {
      const lines = [hello, refLine(`EDGE 0 0 ${notDecimal} H`)];
      expect(detail(lines, 'bands').pass).toBe(true);
      expect(detail(lines, 'syntax').detail).toMatch(/is not a plain decimal number/);
    }
    // Before any HELLO the loop count is not known: no band failure for a high loop number, and loop 0 is a range
    // error of the frame itself (parseLine: loop 1..64), a syntax failure.
    expect(detail([refLine('EDGE 0 0 9 H')], 'bands').pass).toBe(true);
    expect(detail([refLine('EDGE 0 0 0 H')], 'bands').pass).toBe(true);
    expect(detail([refLine('EDGE 0 0 0 H')], 'syntax').detail).toMatch(/EDGE loop 0 is outside 1\.\.64/);
  });

  it('a TICK band letter that is not O, N or H is named with its loop; before HELLO any width is fine', () => {
    expect(detail([hello, refLine('TICK 0 0 NNXN')], 'bands').detail).toMatch(/: band "X" of loop 3 is not O, N or H$/);
    expect(detail([hello, refLine('TICK 0 0 XNNN')], 'bands').detail).toMatch(/: band "X" of loop 1 is not O, N or H$/);
    expect(detail([refLine('TICK 0 0 NNNNNN'), refLine('TICK 1 100000 NN')], 'bands').pass).toBe(true);
  });

  it('a line that broke a content rule is as if unread: the next frame takes its seq, and its time counts for nothing', () => {
    const lines = [hello, refLine('TICK 0 500000 NNNN'), refLine('EDGE 1 100 9 H'), refLine('EDGE 1 600000 1 H')];
    expect(detail(lines, 'bands').pass).toBe(false);
    expect(detail(lines, 'seq').pass).toBe(true);
    expect(detail(lines, 'time').pass).toBe(true);
  });

  it('frames missing a field are syntax failures, never a crash or a band or code failure', () => {
    const lines = [hello, refLine('TICK 0 0'), refLine('FAULT 0 0'), refLine('EDGE 0 0 1')];
    const verdicts = Object.fromEntries(judge(lines).map((v) => [v.rule, v]));
    expect(verdicts.syntax!.detail).toMatch(/^3 failure\(s\)/);
    expect(verdicts.bands!.pass).toBe(true);
    expect(verdicts['fault-codes']!.pass).toBe(true);
  });

  it('names an unknown FAULT code against the list of known ones', () => {
    expect(detail([hello, refLine('FAULT 0 0 HOT')], 'fault-codes').detail).toMatch(/: code "HOT" is not one of OVERRUN, SUPPLY, RESTART$/);
  });

  it('checksums: a CR before the LF is ignored; exactly 4 hex digits after the last "*"', () => {
    expect(judge(goodStream().map((l) => `${l}\r`)).every((v) => v.pass)).toBe(true);
    const body = 'TICK 0 0 NNNN';
    const crc = refLine(body).slice(-4);
    for (const bad of [`${body}*${crc}0`, `${body}*0${crc}`, 'BEEF']) {
      expect(detail([hello, bad], 'crc').detail).toMatch(/: does not end in \*CCCC$/);
    }
    // No body at all checksums as the initial value FFFF (CRC catalogue: init 0xFFFF, no bytes); it is then no frame.
    expect(detail([hello, '*FFFF'], 'crc').pass).toBe(true);
    expect(detail([hello, '*FFFF'], 'syntax').pass).toBe(false);
  });

  it('line length: 120 bytes is within the limit, 121 is not, and the report says how many bytes and which line', () => {
    const fill = (bytes: number) => refLine(`HELLO 1 4 ${'x'.repeat(bytes - refLine('HELLO 1 4 ').length)}`);
    expect(Buffer.byteLength(fill(120))).toBe(120);
    expect(detail([fill(120)], 'line-length')).toMatchObject({ pass: true, detail: '1 lines, longest 120 bytes' });
    const over = fill(121);
    expect(detail([hello, over], 'line-length').detail).toBe(`1 failure(s); first: line 2 "${over.slice(0, 45)}...": 121 bytes`);
    const overlong = noteOverlong(run([hello, hello]), 2);
    expect(judgeConformance(overlong).find((v) => v.rule === 'line-length')!.detail).toBe('2 failure(s); first: line 3: longer than 120 bytes');
    expect(overlong.lines).toBe(4);
  });

  it('quotes a failing line printable and at most 48 characters', () => {
    expect(detail([hello, 'TICK\t0 0 N*0000'], 'crc').detail).toMatch(/line 2 "TICK\?0 0 N\*0000"/);
    const long = refLine(`TICK 0 0 ${'N'.repeat(40)}`);
    expect(long.length).toBeGreaterThan(48);
    expect(detail([hello, long], 'bands').detail).toContain(`line 2 "${long.slice(0, 45)}...":`);
    const exactly48 = `${'A'.repeat(43)}*0000`;
    expect(exactly48.length).toBe(48);
    expect(detail([hello, exactly48], 'crc').detail).toContain(`"${exactly48}"`);
  });

  it('prints one line per rule: pass or FAIL, the rule, then its detail in one column', () => {
    const printed = formatVerdicts(judge([...goodStream(), refLine('TICK 6 900000 NNOO')]));
    expect(printed).toHaveLength(CONFORMANCE_RULES.length);
    expect(printed.filter((l) => l.startsWith('FAIL  ')).length).toBe(1);
    expect(printed.filter((l) => l.startsWith('pass  ')).length).toBe(CONFORMANCE_RULES.length - 1);
    expect(printed[0]).toMatch(/^pass  HELLO first, version 1 +HELLO 1 4 bench-1 \(1 seen\)$/);
    const column = printed.map((l, i) => l.indexOf(judge([...goodStream(), refLine('TICK 6 900000 NNOO')])[i]!.detail));
    expect(new Set(column).size).toBe(1);
    expect(column[0]).toBe(6 + Math.max(...judge([]).map((v) => v.title.length)) + 2);
  });
});

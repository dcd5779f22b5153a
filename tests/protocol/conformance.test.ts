import { describe, expect, it } from 'vitest';
import { checkLine, CONFORMANCE_RULES, initialConformance, judgeConformance, noteOverlong } from '../../src/protocol/conformance.js';
import { encodeLine } from '../../src/protocol/encodeLine.js';

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

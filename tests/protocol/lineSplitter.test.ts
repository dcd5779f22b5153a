import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { flushSplitter, initialSplitter, splitChunk, type SplitterState } from '../../src/protocol/lineSplitter.js';

function feed(chunks: string[]): { lines: string[]; overlong: number; state: SplitterState } {
  let state = initialSplitter();
  const lines: string[] = [];
  let overlong = 0;
  for (const chunk of chunks) {
    const r = splitChunk(state, chunk);
    state = r.state;
    lines.push(...r.lines);
    overlong += r.overlong;
  }
  return { lines, overlong, state };
}

describe('splitChunk', () => {
  it('splits on LF, keeping a CR for the parser to ignore', () => {
    expect(feed(['A*0000\nB*1111\r\nC']).lines).toEqual(['A*0000', 'B*1111\r']);
  });

  it('joins a line split across chunks', () => {
    expect(feed(['EDG', 'E 1 2', ' 3 N*ABCD', '\n']).lines).toEqual(['EDGE 1 2 3 N*ABCD']);
  });

  it('passes empty lines on (the parser drops them)', () => {
    expect(feed(['\n\n']).lines).toEqual(['', '']);
  });

  it('accepts a line of exactly 120 bytes and discards one of 121 up to its LF, counted', () => {
    const r = feed([`${'a'.repeat(120)}\n${'b'.repeat(121)}\nok\n`]);
    expect(r.lines).toEqual(['a'.repeat(120), 'ok']);
    expect(r.overlong).toBe(1);
    expect(splitChunk(initialSplitter(), `${'b'.repeat(121)}\nok\n${'c'.repeat(300)}\n`).overlongBefore).toEqual([0, 1]);
  });

  it('never buffers more than 121 characters of an endless line', () => {
    let state = initialSplitter();
    let overlong = 0;
    for (let i = 0; i < 1000; i++) {
      const r = splitChunk(state, 'x'.repeat(997));
      state = r.state;
      overlong += r.overlong;
      expect(state.partial.length).toBeLessThanOrEqual(121);
    }
    const end = splitChunk(state, '\nnext\n');
    expect(end.lines).toEqual(['next']);
    expect(overlong + end.overlong).toBe(1);
  });

  it('gives the same lines however the stream is cut into chunks', () => {
    const lineArb = fc.string({ maxLength: 140, unit: fc.constantFrom('a', 'b', ' ', '*', '\r') });
    fc.assert(
      fc.property(fc.array(lineArb, { maxLength: 12 }), fc.array(fc.nat(), { maxLength: 10 }), (lines, cuts) => {
        const stream = lines.map((l) => `${l}\n`).join('');
        const positions = [...new Set(cuts.map((c) => c % (stream.length + 1)))].sort((a, b) => a - b);
        const chunks: string[] = [];
        let from = 0;
        for (const p of positions) {
          chunks.push(stream.slice(from, p));
          from = p;
        }
        chunks.push(stream.slice(from));
        const r = feed(chunks);
        expect(r.lines).toEqual(lines.filter((l) => l.length <= 120));
        expect(r.overlong).toBe(lines.filter((l) => l.length > 120).length);
      }),
      { numRuns: 500, seed: 21 },
    );
  });
});

describe('flushSplitter', () => {
  it('hands back an unfinished line so it can be counted, and an unfinished over-long one as a count', () => {
    expect(flushSplitter(feed(['EDGE 1 2']).state)).toMatchObject({ lines: ['EDGE 1 2'], overlong: 0 });
    expect(flushSplitter(feed(['x'.repeat(500)]).state)).toMatchObject({ lines: [], overlong: 1 });
    expect(flushSplitter(initialSplitter())).toMatchObject({ lines: [], overlong: 0 });
  });

  it('says where the lost line stood: before anything else it hands back', () => {
    expect(flushSplitter(feed(['x'.repeat(500)]).state).overlongBefore).toEqual([0]);
    expect(flushSplitter(feed(['EDGE 1 2']).state).overlongBefore).toEqual([]);
  });
});

describe('an over-long line is never buffered (lineSplitter.ts: "discarded up to its LF")', () => {
  it('keeps nothing of it while it lasts, across chunks, and starts afresh after its LF', () => {
    let r = splitChunk(initialSplitter(), 'x'.repeat(200));
    expect(r.state).toEqual({ partial: '', discarding: true });
    r = splitChunk(r.state, 'yyy');
    expect(r.state).toEqual({ partial: '', discarding: true });
    r = splitChunk(r.state, 'zz\nEDGE');
    expect(r).toMatchObject({ lines: [], overlong: 1, overlongBefore: [0], state: { partial: 'EDGE', discarding: false } });
  });
});

import { describe, expect, it } from 'vitest';
import { judgeProtocol } from '../../../src/ops/doctor/judgeProtocol.js';
import type { ListenReport } from '../../../src/ops/doctor/listenToDecoder.js';
import { parseLine } from '../../../src/protocol/parseLine.js';
import { CATALOGUE_CHECK, line } from './protocolLines.js';
import { crc16ccitt } from 'crc';

const context = { checkName: 'decoder main protocol', port: '/dev/ttyACM0', baud: 115200, highestInput: 2, firstValidWithinMs: 2000 };

function report(texts: string[], firstValidAfterMs: number | null = 40): ListenReport {
  return {
    lines: texts.map((t, i) => ({ hostUs: i * 100_000, outcome: parseLine(t.replace(/\n$/, '')) })),
    firstValidAfterMs,
    listenedMs: 5000,
    endedBy: null,
  };
}

describe('judgeProtocol', () => {
  it('builds its lines with the catalogue CRC', () => {
    expect(crc16ccitt(CATALOGUE_CHECK.input)).toBe(CATALOGUE_CHECK.crc);
  });

  it('passes a decoder that speaks protocol v1 and names its inputs and firmware', () => {
    const result = judgeProtocol(report([line('HELLO 1 4 barn-2'), line('TICK 0 100 NNNN')]), context);
    expect(result.status).toBe('ok');
    expect(result.finding).toContain('4 loops');
    expect(result.finding).toContain('firmware barn-2');
  });

  it('fails a silent port with a fix naming the baud rate and the cable', () => {
    const result = judgeProtocol(report([], null), context);
    expect(result.status).toBe('fail');
    expect(result.finding).toContain('silent for 2 s');
    expect(result.fix).toMatch(/baud/);
    expect(result.fix).toMatch(/cable/);
  });

  it('fails garbage (as from a wrong baud rate) and quotes the first reason', () => {
    const result = judgeProtocol(report(['\x92\xf0\x1c', 'TICK 0 100 NNNN*0000'], null), context);
    expect(result.status).toBe('fail');
    expect(result.finding).toMatch(/2 lines .* none of them protocol v1/);
    expect(result.fix).toMatch(/wrong baud rate/);
  });

  it('fails when the config uses an input the decoder does not have', () => {
    const result = judgeProtocol(report([line('TICK 0 100 NN')]), { ...context, highestInput: 5 });
    expect(result.status).toBe('fail');
    expect(result.finding).toContain('input 5');
    expect(result.fix).toContain('2 inputs');
  });

  it('warns about a noisy link', () => {
    const texts = [line('TICK 0 100 NNNN'), line('TICK 1 200 NNNN'), 'TICK 2 300 NNNN*FFFF'];
    const result = judgeProtocol(report(texts), context);
    expect(result.status).toBe('warn');
    expect(result.finding).toContain('crc 1');
  });
});

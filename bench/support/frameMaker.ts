import type { Band } from '../../src/model/band.js';
import { sealBody } from '../../src/protocol/encodeLine.js';

/**
 * Builds decoder protocol v1 lines (`BODY*CCCC`, no LF) with the sequence numbers and 32-bit
 * microsecond clock a decoder would use, for benches that play the decoder in real time.
 */
export interface FrameMaker {
  hello(loops: number): string;
  edge(timeUs: number, input: number, band: Band): string;
  tick(timeUs: number, bands: string): string;
}

const SEQ_MODULO = 65_536;
const TIME_MODULO = 2 ** 32;

export function createFrameMaker(firmware = 'bench-1'): FrameMaker {
  let seq = 0;
  const next = () => {
    const s = seq;
    seq = (seq + 1) % SEQ_MODULO;
    return s;
  };
  const time = (us: number) => Math.round(us) % TIME_MODULO;
  return {
    hello(loops) {
      seq = 0;
      return sealBody(`HELLO 1 ${loops} ${firmware}`);
    },
    edge(timeUs, input, band) {
      return sealBody(`EDGE ${next()} ${time(timeUs)} ${input} ${band}`);
    },
    tick(timeUs, bands) {
      return sealBody(`TICK ${next()} ${time(timeUs)} ${bands}`);
    },
  };
}

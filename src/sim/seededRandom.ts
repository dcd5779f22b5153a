/**
 * A small seeded generator (splitmix32 construction: a Weyl sequence through a 32-bit mixer), so the
 * simulator is reproducible from its seed. Not for anything secret.
 */
export interface SeededRandom {
  /** Uniform in [0, 1). */
  next(): number;
}

export function createSeededRandom(seed: number): SeededRandom {
  let state = seed >>> 0;
  return {
    next() {
      state = (state + 0x9e3779b9) >>> 0;
      let z = state;
      z = Math.imul(z ^ (z >>> 16), 0x85ebca6b);
      z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35);
      z = (z ^ (z >>> 16)) >>> 0;
      return z / 4294967296;
    },
  };
}

/** Independent streams per purpose (one per loop, one for corruption), so editing one loop's timeline leaves the others' draws alone. */
export function deriveSeed(seed: number, stream: number): number {
  let z = (seed ^ Math.imul(stream + 1, 0x27d4eb2d)) >>> 0;
  z = Math.imul(z ^ (z >>> 15), 0x2c1b3c6d);
  z = Math.imul(z ^ (z >>> 12), 0x297a2d39);
  return (z ^ (z >>> 15)) >>> 0;
}

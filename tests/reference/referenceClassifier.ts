/**
 * A second loop classifier, for tests only, written from the README's "Classification rules, exactly"
 * (and "Decoder protocol, version 1") and from nothing in src/: no import from src/classify, src/site
 * or src/protocol. It is meant to be easy to check against the text, not fast: every rule is one
 * paragraph here, numbered as in the README, and time-outs are found by looking at every frame.
 *
 * Scope: one loop on input 1 of a one-loop decoder; frames arrive in order; frames may be lost (a
 * sequence gap) only while the loop is at N, and only TICKs are lost, so every band change is seen as
 * an EDGE. That is what tests/reference/referenceClassifier.test.ts generates.
 */

export type RefBand = 'O' | 'N' | 'H';
export type RefFrame =
  | { type: 'HELLO' }
  | { type: 'EDGE'; seq: number; raw: number; band: RefBand }
  | { type: 'TICK'; seq: number; raw: number; band: RefBand };

export interface RefSettings {
  periodMs: number;
  pulseMinMs: number;
  pulseMaxMs: number;
  shortMs: number;
  openMs: number;
  tripMs: number;
  healthyPulses: number;
  intervalMinRatio: number;
  intervalMaxRatio: number;
  intermittentCount: number;
  intermittentWindowMs: number;
}

export type RefState = 'unknown' | 'healthy' | 'tripped' | 'open' | 'shorted';
export type RefEvent =
  | { what: 'state'; to: RefState; atUs: number }
  | { what: 'intermittent'; on: boolean; atUs: number };

const WRAP = 2 ** 32;

export function referenceClassify(frames: readonly RefFrame[], cfg: RefSettings): RefEvent[] {
  // Durations in whole microseconds (README: settings are compared in decoder µs, rounded to 1 µs).
  const us = (ms: number) => Math.round(ms * 1000);
  const pulseMin = us(cfg.pulseMinMs);
  const pulseMax = us(cfg.pulseMaxMs);
  const shortW = us(cfg.shortMs);
  const openW = us(cfg.openMs);
  const tripW = us(cfg.tripMs);
  const grace = us(cfg.periodMs / 2);
  const gapMin = us(cfg.periodMs * cfg.intervalMinRatio);
  const gapMax = us(cfg.periodMs * cfg.intervalMaxRatio);
  const window = us(cfg.intermittentWindowMs);

  const out: RefEvent[] = [];

  // Decoder time (protocol: "time"): unwrapped; after a HELLO it carries on from the last time heard.
  let base = 0;
  let lastRaw: number | null = null;
  let lastTime: number | null = null;
  let expectSeq: number | null = null;

  // The loop.
  let state = 'unknown' as RefState;
  let band: RefBand | null = null;
  let spanStart = 0;
  let spanFromEdge = false; // the span began with an EDGE (its start is exact)
  let spanFrom: RefBand | null = null; // the band before it, when seen by EDGE
  let heardAt: number | null = null; // last frame time for the loop
  let windowFrom: number | null = null; // rule 6: the trip window's start
  let hiddenAt: number | null = null; // rule 10: latest start a hidden pulse could have had
  let lastPulse: number | null = null; // rule 3: previous valid pulse start (null: chain broken)
  let inRow = 0;
  let entries: number[] = []; // rule 9: fault entries
  let flagged = false;
  let healthySince: number | null = null;
  let stateSince = 0;

  const tripDeadline = (): number | null => {
    if (windowFrom === null) return null;
    const extra = hiddenAt === null ? 0 : Math.min(Math.max(0, hiddenAt - windowFrom), grace);
    return windowFrom + extra + tripW;
  };

  const enter = (to: RefState, at: number) => {
    if (to === state) return;
    // Rule 9: the flag drops at healthy-since + window if that comes no later than the next fault.
    if (flagged && state === 'healthy' && healthySince !== null && healthySince + window <= at) {
      flagged = false;
      out.push({ what: 'intermittent', on: false, atUs: healthySince + window });
      entries = entries.filter((t) => t >= healthySince!);
    }
    state = to;
    stateSince = at;
    out.push({ what: 'state', to, atUs: at });
    healthySince = to === 'healthy' ? at : null;
    if (to === 'tripped' || to === 'open' || to === 'shorted') {
      lastPulse = null; // rule 3: a fault breaks the chain
      inRow = 0;
      entries = [...entries.filter((t) => t >= at - window), at];
      if (!flagged && entries.length >= cfg.intermittentCount) {
        flagged = true;
        out.push({ what: 'intermittent', on: true, atUs: at });
      }
    }
  };

  /** Rule 9's clear when only time passes (no fault entered): dated healthy-since + window. */
  const clearFlagBy = (t: number) => {
    if (flagged && state === 'healthy' && healthySince !== null && healthySince + window <= t) {
      flagged = false;
      out.push({ what: 'intermittent', on: false, atUs: healthySince + window });
      entries = entries.filter((e) => e >= healthySince!);
    }
  };

  /** Rules 4–6: windows that ran out by time t while the band stayed as it is. */
  const expire = (t: number) => {
    if (band === 'H') {
      if (state !== 'shorted' && spanStart + shortW <= t) {
        clearFlagBy(spanStart + shortW);
        enter('shorted', spanStart + shortW);
      }
      return;
    }
    if (band === 'O') {
      const openAt = spanStart + openW;
      if (state !== 'open' && openAt <= t) {
        clearFlagBy(openAt);
        enter('open', openAt);
      }
      clearFlagBy(t);
      return;
    }
    if (band === 'N') {
      const deadline = tripDeadline();
      if (state !== 'tripped' && deadline !== null) {
        const tripAt = Math.max(deadline, spanStart);
        if (tripAt < t) {
          clearFlagBy(tripAt);
          enter('tripped', tripAt);
        }
      }
      clearFlagBy(t);
    }
  };

  const acceptPulse = (start: number, end: number) => {
    const inTolerance = lastPulse !== null && start - lastPulse >= gapMin && start - lastPulse <= gapMax;
    inRow = inTolerance ? inRow + 1 : 1;
    lastPulse = start;
    windowFrom = windowFrom === null ? start : Math.max(windowFrom, start);
    if (state !== 'healthy' && inRow >= cfg.healthyPulses) enter('healthy', end);
  };

  for (const frame of frames) {
    if (frame.type === 'HELLO') {
      // Rule 8: a decoder restart. Everything but the intermittent flag is forgotten.
      base = lastTime ?? 0;
      lastRaw = null;
      expectSeq = 0;
      if (state !== 'unknown') {
        state = 'unknown';
        out.push({ what: 'state', to: 'unknown', atUs: heardAt ?? 0 });
        healthySince = null;
      }
      band = null;
      windowFrom = null;
      hiddenAt = null;
      lastPulse = null;
      inRow = 0;
      entries = [];
      continue;
    }
    // Protocol: unwrap the 32-bit time.
    let t: number;
    if (lastRaw === null || lastTime === null) t = Math.max(base + frame.raw, lastTime ?? 0);
    else t = lastTime + ((frame.raw - lastRaw + WRAP) % WRAP);
    lastRaw = frame.raw;
    lastTime = t;
    // Rule 10: lost frames, revealed by this frame's seq.
    const lost = expectSeq === null ? 0 : (frame.seq - expectSeq + 65536) % 65536;
    expectSeq = (frame.seq + 1) % 65536;
    if (lost >= 2 && band === 'N' && heardAt !== null) {
      lastPulse = null;
      inRow = 0;
      const deadline = tripDeadline();
      if (state !== 'tripped' && deadline !== null) {
        const latest = Math.min(Math.max(heardAt, t) - pulseMin, deadline);
        if (latest >= heardAt) hiddenAt = hiddenAt === null ? latest : Math.max(hiddenAt, latest);
      }
    }
    if (windowFrom === null) windowFrom = t; // rule 6: the first frame starts the window
    heardAt = t;

    if (frame.band !== band) {
      expire(t);
      // The span of `band` ends at t.
      // A span that already proved to be a short (rule 4) books nothing more.
      if (band === 'H' && !(state === 'shorted' && stateSince >= spanStart)) {
        const width = t - spanStart;
        const valid = frame.type === 'EDGE' && spanFromEdge && spanFrom === 'N' && frame.band === 'N' && width >= pulseMin && width <= pulseMax;
        if (valid) {
          clearFlagBy(t);
          acceptPulse(spanStart, t);
        } else {
          const deadline = tripDeadline();
          if (state !== 'tripped' && deadline !== null && Math.max(deadline, spanStart) < t) {
            clearFlagBy(Math.max(deadline, spanStart));
            enter('tripped', Math.max(deadline, spanStart));
          } else clearFlagBy(t);
        }
      }
      if ((state === 'open' && band === 'O') || (state === 'shorted' && band === 'H')) windowFrom = t; // rule 6
      spanFrom = frame.type === 'EDGE' ? band : null;
      spanFromEdge = frame.type === 'EDGE';
      band = frame.band;
      spanStart = t;
    }
    expire(t);
  }
  return out;
}

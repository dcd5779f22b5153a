import { countOf } from '../../model/plural.js';
import type { LoopState } from '../../model/loopState.js';
import type { LoopTimeline } from '../webPorts.js';
import { html, trustedHtml, type SafeHtml } from './html.js';
import { siteClock, spanWords, wallClock } from './siteTime.js';
import { BOARD_STATE_LABEL } from './stateWords.js';

/**
 * The loop page's picture: one lane per state (the lane, not the colour, says which state) above the
 * per-minute pulse-interval trace with its jitter band and the accepted interval range. A cable that
 * is going bad shows as a widening band and out-of-range ticks before the loop ever trips.
 */

const LANES: readonly LoopState[] = ['healthy', 'tripped', 'open', 'shorted', 'offline', 'unknown'];
const LANE_FILL = {
  healthy: '#1d6b2c',
  tripped: '#b3261e',
  open: '#8a4b00',
  shorted: '#8a4b00',
  offline: '#4a4a4a',
  unknown: '#6b6b6b',
} as const satisfies Record<LoopState, string>;

const W = 400;
const LEFT = 74;
const RIGHT = W - 8;
const LANE_H = 18;
const LANES_TOP = 6;
const TRACE_TOP = LANES_TOP + LANES.length * LANE_H + 22;
const TRACE_H = 120;
const AXIS_Y = TRACE_TOP + TRACE_H + 18;
const H = AXIS_Y + 8;

const r1 = (n: number) => Math.round(n * 10) / 10;

export interface TimelineOptions {
  periodMs: number;
  intervalMinRatio: number;
  intervalMaxRatio: number;
  timeZone: string;
}

export function stateDurations(timeline: LoopTimeline): Map<LoopState, number> {
  const totals = new Map<LoopState, number>();
  for (const s of timeline.states) {
    const from = Math.max(s.fromMs, timeline.fromMs);
    const to = Math.min(s.toMs, timeline.toMs);
    if (to > from) totals.set(s.state, (totals.get(s.state) ?? 0) + (to - from));
  }
  return totals;
}

export function renderTimeline(timeline: LoopTimeline, options: TimelineOptions): SafeHtml {
  const span = Math.max(1, timeline.toMs - timeline.fromMs);
  const x = (ms: number) => r1(LEFT + ((Math.min(Math.max(ms, timeline.fromMs), timeline.toMs) - timeline.fromMs) / span) * (RIGHT - LEFT));
  const yMax = options.periodMs * 2;
  const y = (ms: number) => r1(TRACE_TOP + TRACE_H - (Math.min(Math.max(ms, 0), yMax) / yMax) * TRACE_H);

  const parts: string[] = [];
  LANES.forEach((state, i) => {
    const top = LANES_TOP + i * LANE_H;
    parts.push(`<rect x="${LEFT}" y="${top}" width="${RIGHT - LEFT}" height="${LANE_H - 2}" fill="currentColor" fill-opacity="0.07"/>`);
    parts.push(`<text x="${LEFT - 5}" y="${top + LANE_H - 5.5}" text-anchor="end" class="tl-label">${state}</text>`);
  });
  for (const s of timeline.states) {
    const lane = LANES.indexOf(s.state);
    const x0 = x(s.fromMs);
    const x1 = x(s.toMs);
    if (lane < 0 || x1 <= x0) continue;
    parts.push(`<rect x="${x0}" y="${LANES_TOP + lane * LANE_H}" width="${Math.max(1, r1(x1 - x0))}" height="${LANE_H - 2}" fill="${LANE_FILL[s.state]}"/>`);
  }

  // Trace panel: accepted interval range, nominal period, jitter band, mean line, out-of-range ticks.
  const lo = options.periodMs * options.intervalMinRatio;
  const hi = options.periodMs * options.intervalMaxRatio;
  parts.push(`<rect x="${LEFT}" y="${TRACE_TOP}" width="${RIGHT - LEFT}" height="${TRACE_H}" fill="none" stroke="currentColor" stroke-opacity="0.35"/>`);
  parts.push(`<rect x="${LEFT}" y="${y(hi)}" width="${RIGHT - LEFT}" height="${r1(y(lo) - y(hi))}" fill="#1d6b2c" fill-opacity="0.08"/>`);
  for (const [value, label] of [
    [hi, `${Math.round(hi)} ms`],
    [options.periodMs, `${Math.round(options.periodMs)} ms`],
    [lo, `${Math.round(lo)} ms`],
  ] as const) {
    parts.push(`<line x1="${LEFT}" x2="${RIGHT}" y1="${y(value)}" y2="${y(value)}" stroke="currentColor" stroke-opacity="0.5" stroke-dasharray="${value === options.periodMs ? '1 0' : '4 3'}" stroke-width="${value === options.periodMs ? 0.6 : 1}"/>`);
    parts.push(`<text x="${LEFT - 5}" y="${y(value) + 4}" text-anchor="end" class="tl-label">${label}</text>`);
  }

  const segments: Array<Array<{ atMs: number; meanMs: number; jitterMs: number }>> = [];
  let current: Array<{ atMs: number; meanMs: number; jitterMs: number }> = [];
  for (const point of [...timeline.intervals].sort((a, b) => a.atMs - b.atMs)) {
    if (point.meanMs === null) {
      if (current.length > 0) segments.push(current);
      current = [];
      continue;
    }
    current.push({ atMs: point.atMs, meanMs: point.meanMs, jitterMs: point.jitterMs ?? 0 });
  }
  if (current.length > 0) segments.push(current);
  for (const seg of segments) {
    const upper = seg.map((p) => `${x(p.atMs)},${y(p.meanMs + p.jitterMs)}`);
    const lower = seg.map((p) => `${x(p.atMs)},${y(p.meanMs - p.jitterMs)}`).reverse();
    parts.push(`<polygon points="${[...upper, ...lower].join(' ')}" class="tl-band" fill="#1f4e9c" fill-opacity="0.25"/>`);
    if (seg.length === 1) parts.push(`<circle cx="${x(seg[0]!.atMs)}" cy="${y(seg[0]!.meanMs)}" r="1.8" class="tl-dot" fill="#1f4e9c"/>`);
    else parts.push(`<polyline points="${seg.map((p) => `${x(p.atMs)},${y(p.meanMs)}`).join(' ')}" fill="none" class="tl-trace" stroke="#1f4e9c" stroke-width="1.6"/>`);
  }
  for (const point of timeline.intervals) {
    if (point.outOfTolerance > 0) {
      const px = x(point.atMs);
      parts.push(`<path d="M${px} ${TRACE_TOP + TRACE_H}l-2.5 -6h5z" fill="#b3261e"/>`);
    }
  }

  // Time axis: grid lines every 3 hours (for 24 h), labelled at 00, 06, 12 and 18 o'clock so labels never touch on a phone.
  const stepMs = span > 36 * 3_600_000 ? 12 * 3_600_000 : span > 12 * 3_600_000 ? 3 * 3_600_000 : 3_600_000;
  const firstTick = Math.ceil(timeline.fromMs / stepMs) * stepMs;
  for (let t = firstTick; t <= timeline.toMs; t += stepMs) {
    const px = x(t);
    parts.push(`<line x1="${px}" x2="${px}" y1="${LANES_TOP}" y2="${TRACE_TOP + TRACE_H}" stroke="currentColor" stroke-opacity="0.12"/>`);
    const onSixHours = wallClock(t, options.timeZone).hour % 6 === 0;
    if ((stepMs !== 3 * 3_600_000 || onSixHours) && px > LEFT + 16 && px < RIGHT - 16) {
      parts.push(`<text x="${px}" y="${AXIS_Y}" text-anchor="middle" class="tl-label">${siteClock(t, options.timeZone)}</text>`);
    }
  }
  parts.push(`<text x="${LEFT}" y="${TRACE_TOP - 7}" class="tl-label">pulse interval, per minute</text>`);

  const totals = stateDurations(timeline);
  const summary = LANES.filter((s) => (totals.get(s) ?? 0) > 0)
    .map((s) => `${BOARD_STATE_LABEL[s].toLowerCase()} ${spanWords(totals.get(s)!)}`)
    .join(', ');
  const outMinutes = timeline.intervals.filter((p) => p.outOfTolerance > 0).length;
  const label = `Last ${spanWords(span)}: ${summary || 'no data'}; ${outMinutes === 0 ? 'no minute' : countOf(outMinutes, 'minute')} with pulse intervals out of range.`;

  // Every string above is built from numbers and fixed words of this module; only `label` is text.
  return html`<figure class="timeline">
<svg viewBox="0 0 ${W} ${H}" role="img" aria-label="${label}" class="timeline-svg" preserveAspectRatio="xMinYMin meet">${trustedHtml(parts.join(''))}</svg>
<figcaption><p>${label}</p><p class="note">Upper rows: which state the loop was in. Below: the mean time between pulses each minute (line), its jitter (shaded), the accepted range (dashed, ${Math.round(lo)}–${Math.round(hi)} ms) and minutes with intervals outside it (red marks). A widening band or growing red marks show a failing joint or cable before the loop trips.</p></figcaption>
</figure>`;
}

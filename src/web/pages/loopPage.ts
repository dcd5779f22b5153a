import type { Principal } from '../auth/principal.js';
import { roleAllows } from '../auth/roles.js';
import type { LoopDetailView, LoopTimeline } from '../webPorts.js';
import { boardState } from './boardOrder.js';
import { html, type SafeHtml } from './html.js';
import { renderPage } from './layout.js';
import { agoWords, sinceWords, siteTime, spanWords } from './siteTime.js';
import { stateShape } from './stateShape.js';
import { ALARM_STATE_LABEL, BOARD_STATE_LABEL, PRIORITY_LABEL } from './stateWords.js';
import { renderTimeline } from './timelineSvg.js';

export interface LoopPageData {
  siteName: string;
  timeZone: string;
  now: number;
  loop: LoopDetailView;
  timeline: LoopTimeline | null;
  intervalMinRatio: number;
  intervalMaxRatio: number;
}

const fmt = (n: number | null, unit: string) => (n === null ? '—' : `${n.toFixed(n >= 100 ? 0 : 1)} ${unit}`);

function serviceForm(data: LoopPageData, principal: Principal): SafeHtml {
  if (!roleAllows(principal.role, 'operator')) return html``;
  const csrf = html`<input type="hidden" name="csrf" value="${principal.csrfToken ?? ''}">`;
  const id = encodeURIComponent(data.loop.id);
  if (data.loop.inService) {
    return html`<form method="post" action="/loops/${id}/out-of-service" class="panel">
  <h2>Take out of service</h2>
  <p class="note">For maintenance: the loop raises nothing until it is put back.</p>
  ${csrf}
  <label for="oos-note">Reason (required)</label>
  <input id="oos-note" name="note" type="text" maxlength="1000" required>
  <button type="submit" class="button">Take out of service</button>
</form>`;
  }
  return html`<form method="post" action="/loops/${id}/return-to-service" class="panel">
  <h2>Return to service</h2>
  ${csrf}
  <label for="rts-note">Note (optional)</label>
  <input id="rts-note" name="note" type="text" maxlength="1000">
  <button type="submit" class="button button-main">Return to service</button>
</form>`;
}

export function renderLoopPage(data: LoopPageData, principal: Principal, flash: string | null): string {
  const { loop } = data;
  const state = boardState(loop);
  const q = loop.quality;
  const alarm = loop.alarm
    ? html`<p><a class="button button-main" href="/alarms/${loop.alarm.id}">Open the ${PRIORITY_LABEL[loop.alarm.priority].toLowerCase()}: ${loop.alarm.condition}, ${ALARM_STATE_LABEL[loop.alarm.state]}</a></p>`
    : '';
  const body = html`<div class="status state-${state}">
  ${stateShape(state, 48)}
  <div>
    <h1 class="status-title">${loop.name}</h1>
    <p class="status-state">${BOARD_STATE_LABEL[state]}${loop.intermittent ? ' · intermittent' : ''} since ${siteTime(loop.sinceMs, data.timeZone, data.now)} (${sinceWords(data.now - loop.sinceMs)})</p>
  </div>
</div>
${alarm}
<dl class="facts">
  ${loop.location ? html`<dt>Where</dt><dd>${loop.location}</dd>` : ''}
  <dt>Wiring</dt><dd>decoder ${loop.decoder}, input ${loop.input}</dd>
  <dt>Last pulse</dt><dd>${loop.lastPulseAtMs === null ? 'none seen yet' : agoWords(data.now - loop.lastPulseAtMs)}</dd>
  <dt>Expected</dt><dd>a pulse every ${loop.periodMs} ms</dd>
  ${loop.inService ? '' : html`<dt>Out of service</dt><dd>${loop.serviceNote ?? ''}</dd>`}
</dl>
<section><h2>Last 24 hours</h2>
${
  data.timeline
    ? renderTimeline(data.timeline, { periodMs: loop.periodMs, intervalMinRatio: data.intervalMinRatio, intervalMaxRatio: data.intervalMaxRatio, timeZone: data.timeZone })
    : html`<p class="note">No history recorded yet.</p>`
}
</section>
<section><h2>Line quality</h2>
<p class="note">Since ${siteTime(q.sinceMs, data.timeZone, data.now)}.</p>
<dl class="facts facts-numbers">
  <dt>Pulses</dt><dd>${q.pulses}</dd>
  <dt>Mean interval</dt><dd>${fmt(q.intervalMeanMs, 'ms')}</dd>
  <dt>Jitter</dt><dd>${fmt(q.intervalJitterMs, 'ms')}</dd>
  <dt>Intervals out of range</dt><dd>${q.outOfTolerance}</dd>
  <dt>Glitches (too short)</dt><dd>${q.glitches}</dd>
  <dt>Long pulses</dt><dd>${q.longPulses}</dd>
  <dt>Lost frames</dt><dd>${q.lostFrames}</dd>
</dl>
</section>
${serviceForm(data, principal)}
<p><a class="button button-quiet" href="/history?loop=${encodeURIComponent(loop.id)}">History of this loop</a></p>`;
  return renderPage({ title: loop.name, siteName: data.siteName, principal, section: 'none', flash, body });
}

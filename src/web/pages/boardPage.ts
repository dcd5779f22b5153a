import type { Principal } from '../auth/principal.js';
import type { AlarmView, LoopView } from '../webPorts.js';
import { orderBoard, boardState, type BoardGroup } from './boardOrder.js';
import { html, trustedHtml, type SafeHtml } from './html.js';
import { renderPage } from './layout.js';
import { agoWords, sinceWords, siteTime, spanWords } from './siteTime.js';
import { stateShape } from './stateShape.js';
import { ALARM_STATE_LABEL, BOARD_STATE_LABEL, PRIORITY_LABEL } from './stateWords.js';
import { CONDITION_TEXT } from '../../model/condition.js';

export interface BoardData {
  siteName: string;
  timeZone: string;
  now: number;
  loops: LoopView[];
  /** Listed alarms that belong to no loop: a decoder, the mail or the store. */
  otherAlarms: AlarmView[];
}

const GROUP_HEADING = {
  alarm: 'Alarm',
  trouble: 'Trouble',
  'out-of-service': 'Out of service',
  healthy: 'Healthy',
} as const satisfies Record<BoardGroup, string>;

const COUNT_WORDS = {
  alarm: ['alarm', 'alarms'],
  trouble: ['trouble', 'trouble'],
  'out-of-service': ['out of service', 'out of service'],
  healthy: ['healthy', 'healthy'],
} as const satisfies Record<BoardGroup, readonly [string, string]>;

function pulseWords(loop: LoopView, now: number): string {
  if (loop.lastPulseAtMs === null) return 'no pulse seen yet';
  return `last pulse ${agoWords(now - loop.lastPulseAtMs)}`;
}

function loopCard(loop: LoopView, data: BoardData): SafeHtml {
  const state = boardState(loop);
  const href = loop.alarm ? `/alarms/${loop.alarm.id}` : `/loops/${encodeURIComponent(loop.id)}`;
  // The condition is named only when the state word above does not already say it (a latched trip on a loop now healthy).
  const alarmLine = loop.alarm
    ? html`<span class="card-alarm">${PRIORITY_LABEL[loop.alarm.priority]}${loop.alarm.condition === loop.state ? '' : ` (${loop.alarm.condition})`}: ${ALARM_STATE_LABEL[loop.alarm.state]}</span>`
    : '';
  return html`<li class="card state-${state}" data-loop="${loop.id}">
  <a class="card-link" href="${href}">
    ${stateShape(state, 40)}
    <span class="card-text">
      <span class="card-name">${loop.name}</span>
      <span class="card-state">${BOARD_STATE_LABEL[state]}${loop.intermittent ? ' · intermittent' : ''}</span>
      ${alarmLine}
      <span class="card-meta">since ${siteTime(loop.sinceMs, data.timeZone, data.now)} (${sinceWords(data.now - loop.sinceMs)}) · ${pulseWords(loop, data.now)}</span>
      ${loop.location ? html`<span class="card-meta">${loop.location}</span>` : ''}
    </span>
  </a>
</li>`;
}

function otherAlarmCard(alarm: AlarmView, data: BoardData): SafeHtml {
  return html`<li class="card state-${alarm.priority === 'alarm' ? 'tripped' : 'offline'}">
  <a class="card-link" href="/alarms/${alarm.id}">
    ${stateShape(alarm.condition === 'offline' ? 'offline' : 'unknown', 40)}
    <span class="card-text">
      <span class="card-name">${alarm.source === 'system' ? 'The monitor itself' : alarm.source}</span>
      <span class="card-state">${PRIORITY_LABEL[alarm.priority]}: ${CONDITION_TEXT[alarm.condition].words.split(':')[0]}</span>
      <span class="card-alarm">${ALARM_STATE_LABEL[alarm.state]}</span>
      <span class="card-meta">since ${siteTime(alarm.raisedAtMs, data.timeZone, data.now)} (${sinceWords(data.now - alarm.raisedAtMs)})</span>
    </span>
  </a>
</li>`;
}

/** The live part of the board, also served alone at /board/list for the live-update script. */
export function renderBoardList(data: BoardData): string {
  const groups = orderBoard(data.loops);
  const counts = groups.map((g) => html`<span class="count count-${g.group}">${g.loops.length} ${COUNT_WORDS[g.group][g.loops.length === 1 ? 0 : 1]}</span>`);
  const section = (g: (typeof groups)[number]) =>
    html`<section class="group group-${g.group}" aria-labelledby="g-${g.group}"><h2 id="g-${g.group}">${GROUP_HEADING[g.group]} (${g.loops.length})</h2><ul class="cards">${g.loops.map((loop) => loopCard(loop, data))}</ul></section>`;
  const other =
    data.otherAlarms.length > 0
      ? html`<section class="group group-system" aria-labelledby="g-system"><h2 id="g-system">Decoder and monitor (${data.otherAlarms.length})</h2><ul class="cards">${data.otherAlarms.map((a) => otherAlarmCard(a, data))}</ul></section>`
      : '';
  // Priority order of the trade: alarms, then trouble (loops first, then decoder and monitor), then the rest.
  const urgent = groups.filter((g) => g.group === 'alarm' || g.group === 'trouble');
  const calm = groups.filter((g) => g.group !== 'alarm' && g.group !== 'trouble');
  return html`<p class="summary">${counts.length > 0 ? counts : 'No loops are configured.'}<span class="as-of"> · as of ${siteTime(data.now, data.timeZone, data.now)}</span></p>
${urgent.map(section)}${other}${calm.map(section)}`.value;
}

export function renderBoardPage(data: BoardData, principal: Principal, flash: string | null): string {
  return renderPage({
    title: 'Board',
    siteName: data.siteName,
    principal,
    section: 'board',
    flash,
    scripts: ['/static/board.js'],
    noScriptRefreshSeconds: 30,
    body: html`<h1 class="visually-hidden">Board</h1>
<p class="live-status" id="live-status" aria-live="polite" hidden></p>
<div id="board-list">${trustedHtml(renderBoardList(data))}</div>`,
  });
}

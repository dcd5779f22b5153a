import type { Principal } from '../auth/principal.js';
import { alarmStanding, BACK_TO_NORMAL_NEEDS_ACK } from '../../model/alarmStanding.js';
import { CONDITION_NAME } from '../../model/condition.js';
import type { AlarmView, LoopView } from '../webPorts.js';
import { orderBoard, boardState, type BoardGroup } from './boardOrder.js';
import { html, trustedHtml, type SafeHtml } from './html.js';
import { renderPage } from './layout.js';
import { agoWords, sinceWords, siteTime } from './siteTime.js';
import { sourceLabel, type SiteNames } from './siteNames.js';
import { stateShape, type ShapeName } from './stateShape.js';
import { BOARD_STATE_LABEL, PRIORITY_LABEL, standingWords } from './stateWords.js';

export interface BoardData {
  siteName: string;
  timeZone: string;
  now: number;
  loops: LoopView[];
  /** Listed alarms that belong to no loop: a decoder, the mail or the store. */
  otherAlarms: AlarmView[];
  names: SiteNames;
}

const GROUP_HEADING = {
  alarm: 'Alarm',
  trouble: 'Trouble',
  'out-of-service': 'Out of service',
  healthy: 'Healthy',
} as const satisfies Record<BoardGroup, string>;

/** The summary counts every group the board shows, in the words of its heading. */
const COUNT_WORDS = {
  alarm: ['alarm', 'alarms'],
  trouble: ['trouble', 'trouble'],
  'out-of-service': ['out of service', 'out of service'],
  healthy: ['healthy', 'healthy'],
  system: ['decoder and monitor trouble', 'decoder and monitor trouble'],
} as const satisfies Record<BoardGroup | 'system', readonly [string, string]>;
const SYSTEM_HEADING = 'Decoder and monitor trouble';

export const capitalFirst = (text: string) => text.charAt(0).toUpperCase() + text.slice(1);

/**
 * A card's look: the loop's state, except that a loop back to normal whose alarm nobody has
 * acknowledged keeps an attention look (never the healthy tick) until someone does.
 */
export function cardLook(loop: LoopView): { look: ShapeName; pendingAck: boolean } {
  const state = boardState(loop);
  const pendingAck = loop.alarm !== null && alarmStanding(loop.alarm.state, loop.alarm.active) === 'cleared-unacknowledged';
  return { look: pendingAck && state === 'healthy' ? 'back-to-normal' : state, pendingAck };
}

function attentionClass(priority: AlarmView['priority'] | undefined, pendingAck: boolean): string {
  return pendingAck && priority ? ` attention-${priority}` : '';
}

function pulseWords(loop: LoopView, now: number): string {
  if (loop.lastPulseAtMs === null) return 'no pulse seen yet';
  return `last pulse ${agoWords(now - loop.lastPulseAtMs)}`;
}

function loopCard(loop: LoopView, data: BoardData): SafeHtml {
  const { look, pendingAck } = cardLook(loop);
  const href = loop.alarm ? `/alarms/${loop.alarm.id}` : `/loops/${encodeURIComponent(loop.id)}`;
  const stateText = look === 'back-to-normal' ? capitalFirst(BACK_TO_NORMAL_NEEDS_ACK) : BOARD_STATE_LABEL[look];
  // The condition is named only when the state word above does not already say it; the standing only when the state line does not.
  let alarmLine: SafeHtml | string = '';
  if (loop.alarm) {
    const named = loop.alarm.condition === loop.state ? '' : ` (${CONDITION_NAME[loop.alarm.condition]})`;
    const standing = look === 'back-to-normal' ? '' : `: ${standingWords(loop.alarm)}`;
    alarmLine = html`<span class="card-alarm">${PRIORITY_LABEL[loop.alarm.priority]}${named}${standing}</span>`;
  }
  return html`<li class="card state-${look}${attentionClass(loop.alarm?.priority, pendingAck)}" data-loop="${loop.id}">
  <a class="card-link" href="${href}">
    ${stateShape(look, 40)}
    <span class="card-text">
      <span class="card-name">${loop.name}</span>
      <span class="card-state">${stateText}${loop.intermittent ? ' · intermittent' : ''}</span>
      ${alarmLine}
      <span class="card-meta">since ${siteTime(loop.sinceMs, data.timeZone, data.now)} (${sinceWords(data.now - loop.sinceMs)}) · ${pulseWords(loop, data.now)}</span>
      ${loop.location ? html`<span class="card-meta">${loop.location}</span>` : ''}
    </span>
  </a>
</li>`;
}

function otherAlarmCard(alarm: AlarmView, data: BoardData): SafeHtml {
  const pendingAck = alarmStanding(alarm.state, alarm.active) === 'cleared-unacknowledged';
  const look: ShapeName = pendingAck ? 'back-to-normal' : alarm.condition === 'offline' ? 'offline' : 'unknown';
  const tone = pendingAck ? 'back-to-normal' : alarm.priority === 'alarm' ? 'tripped' : 'offline';
  return html`<li class="card state-${tone}${attentionClass(alarm.priority, pendingAck)}">
  <a class="card-link" href="/alarms/${alarm.id}">
    ${stateShape(look, 40)}
    <span class="card-text">
      <span class="card-name">${sourceLabel(alarm, data.names)}</span>
      <span class="card-state">${PRIORITY_LABEL[alarm.priority]}: ${CONDITION_NAME[alarm.condition]}</span>
      <span class="card-alarm">${capitalFirst(standingWords(alarm))}</span>
      <span class="card-meta">since ${siteTime(alarm.raisedAtMs, data.timeZone, data.now)} (${sinceWords(data.now - alarm.raisedAtMs)})</span>
    </span>
  </a>
</li>`;
}

/** The live part of the board, also served alone at /board/list for the live-update script. */
export function renderBoardList(data: BoardData): string {
  const groups = orderBoard(data.loops);
  // Priority order of the trade: alarms, then trouble (loops first, then decoder and monitor), then the rest.
  const urgent = groups.filter((g) => g.group === 'alarm' || g.group === 'trouble');
  const calm = groups.filter((g) => g.group !== 'alarm' && g.group !== 'trouble');
  const count = (key: keyof typeof COUNT_WORDS, n: number) =>
    html`<span class="count count-${key}">${n} ${COUNT_WORDS[key][n === 1 ? 0 : 1]}</span>`;
  const counts = [
    ...urgent.map((g) => count(g.group, g.loops.length)),
    ...(data.otherAlarms.length > 0 ? [count('system', data.otherAlarms.length)] : []),
    ...calm.map((g) => count(g.group, g.loops.length)),
  ];
  const section = (g: (typeof groups)[number]) =>
    html`<section class="group group-${g.group}" aria-labelledby="g-${g.group}"><h2 id="g-${g.group}">${GROUP_HEADING[g.group]} (${g.loops.length})</h2><ul class="cards">${g.loops.map((loop) => loopCard(loop, data))}</ul></section>`;
  const other =
    data.otherAlarms.length > 0
      ? html`<section class="group group-system" aria-labelledby="g-system"><h2 id="g-system">${SYSTEM_HEADING} (${data.otherAlarms.length})</h2><ul class="cards">${data.otherAlarms.map((a) => otherAlarmCard(a, data))}</ul></section>`
      : '';
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

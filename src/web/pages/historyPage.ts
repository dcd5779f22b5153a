import { CONDITION_NAME, PRIORITIES } from '../../model/condition.js';
import type { Principal } from '../auth/principal.js';
import type { EventView, LoopView } from '../webPorts.js';
import { historyQuery, HISTORY_PERIODS, type HistoryFilter } from './historyFilter.js';
import { html } from './html.js';
import { renderPage } from './layout.js';
import { auditWords } from './auditWords.js';
import { capitalFirst } from './boardPage.js';
import type { SiteNames } from './siteNames.js';
import { siteTime } from './siteTime.js';
import { BOARD_STATE_LABEL, PRIORITY_LABEL } from './stateWords.js';

export interface HistoryPageData {
  siteName: string;
  timeZone: string;
  now: number;
  loops: LoopView[];
  filter: HistoryFilter;
  items: EventView[];
  nextCursor: string | null;
  names: SiteNames;
}

/**
 * One history row in people's words: "Tripped (was healthy): no valid pulse for 1500 ms", "Tripped:
 * step 2: told On-call phone". `who` is the person who acted, if one did; `said` their own note.
 */
export function eventWords(e: EventView, names: SiteNames, timeZone: string, now: number): { what: string; who: string | null; said: string | null; text: string } {
  if (e.kind === 'state-change' && e.toState) {
    const was = e.fromState ? ` (was ${BOARD_STATE_LABEL[e.fromState].toLowerCase()})` : '';
    const reason = e.summary.includes(': ') ? e.summary.slice(e.summary.indexOf(': ') + 2) : '';
    const what = `${BOARD_STATE_LABEL[e.toState]}${was}${reason ? `: ${reason}` : ''}`;
    return { what, who: null, said: null, text: what };
  }
  if (e.kind === 'audit' && e.action) {
    const words = auditWords({ action: e.action, actor: e.actor ?? 'system', note: e.note ?? null }, names.contacts, timeZone, now);
    const what = e.condition ? `${capitalFirst(CONDITION_NAME[e.condition])}: ${words.what}` : capitalFirst(words.what);
    const text = `${what}${words.who ? ` by ${words.who}` : ''}${words.said ? `: “${words.said}”` : ''}`;
    return { ...words, what, text };
  }
  return { what: e.summary, who: e.actor, said: null, text: e.summary };
}

const PERIOD_LABEL = { '24h': 'Last 24 hours', '7d': 'Last 7 days', '30d': 'Last 30 days', '1y': 'Last year', all: 'All time' } as const;

export function renderHistoryPage(data: HistoryPageData, principal: Principal): string {
  const { filter } = data;
  const loopNames = new Map(data.loops.map((l) => [l.id, l.name]));
  const row = (e: EventView) => {
    const words = eventWords(e, data.names, data.timeZone, data.now);
    return html`<span class="event-what">${words.what}${words.who ? html` by ${words.who}` : ''}${words.said ? html`: “${words.said}”` : ''}</span>`;
  };
  const selected = (on: boolean) => (on ? html` selected` : '');
  const form = html`<form method="get" action="/history" class="panel filters">
  <label for="f-loop">Loop</label>
  <select id="f-loop" name="loop"><option value="">All loops</option>${data.loops.map((l) => html`<option value="${l.id}"${selected(filter.loop === l.id)}>${l.name}</option>`)}</select>
  <label for="f-priority">Priority</label>
  <select id="f-priority" name="priority"><option value="">Any</option>${PRIORITIES.map((p) => html`<option value="${p}"${selected(filter.priority === p)}>${PRIORITY_LABEL[p]}</option>`)}</select>
  <label for="f-period">Period</label>
  <select id="f-period" name="period">${(Object.keys(HISTORY_PERIODS) as Array<keyof typeof HISTORY_PERIODS>).map((p) => html`<option value="${p}"${selected(filter.period === p)}>${PERIOD_LABEL[p]}</option>`)}</select>
  <details${filter.fromText || filter.toText ? html` open` : ''}><summary>Exact times</summary>
    <label for="f-from">From (site time)</label><input id="f-from" name="from" type="datetime-local" value="${filter.fromText}">
    <label for="f-to">To (site time)</label><input id="f-to" name="to" type="datetime-local" value="${filter.toText}">
  </details>
  <button type="submit" class="button button-main">Show</button>
</form>`;
  const list =
    data.items.length > 0
      ? html`<ol class="events">${data.items.map(
          (e) => html`<li class="event ${e.priority ? `event-${e.priority}` : ''}">
  <time datetime="${new Date(e.atMs).toISOString()}">${siteTime(e.atMs, data.timeZone, data.now)}</time>
  <span class="event-where">${e.loopId ? (loopNames.get(e.loopId) ?? e.loopId) : 'The monitor and decoders'}${e.priority ? html` · ${PRIORITY_LABEL[e.priority]}` : ''}</span>
  ${row(e)}
</li>`,
        )}</ol>`
      : html`<p class="note">Nothing happened in this period.</p>`;
  const more = data.nextCursor ? html`<a class="button" href="/history?${historyQuery(filter, { cursor: data.nextCursor })}">Older</a>` : '';
  const body = html`<h1>History</h1>
${form}
<p><a class="button button-quiet" href="/history.csv?${historyQuery(filter)}" download>Download as CSV</a></p>
${list}
<p>${more}</p>`;
  return renderPage({ title: 'History', siteName: data.siteName, principal, section: 'history', body });
}

import { CONDITION_TEXT } from '../model/condition.js';
import type { AlarmPayload, EventPayload } from '../mqtt/sitePayloads.js';
import type { Principal } from '../web/auth/principal.js';
import { html, type SafeHtml } from '../web/pages/html.js';
import { renderPage } from '../web/pages/layout.js';
import { sinceWords, siteTime } from '../web/pages/siteTime.js';
import { stateShape } from '../web/pages/stateShape.js';
import { ALARM_STATE_LABEL, BOARD_STATE_LABEL, PRIORITY_LABEL, type BoardState } from '../web/pages/stateWords.js';
import { isReporting, orderSites, standingOf, type SiteSeen, type SiteStanding } from './estateBook.js';

/**
 * The estate's pages, in the site board's layout, styles and shapes: every site worst first, one
 * site's loops and active alarms, and recent events. Read only: acting happens on the site's own pages.
 */
export interface EstateView {
  estateName: string;
  timeZone: string;
  now: number;
  staleAfterMs: number | undefined;
  sites: Array<{ seen: SiteSeen; name: string; url: string | null }>;
}

export const STANDING_LABEL = {
  alarm: 'Alarm',
  'not-reporting': 'Site not reporting',
  trouble: 'Trouble',
  system: 'System trouble',
  normal: 'All normal',
} as const satisfies Record<SiteStanding, string>;

/** The board's shapes and colours, borrowed by meaning: a triangle for alarm, the crossed square for silence. */
const STANDING_SHAPE = { alarm: 'tripped', 'not-reporting': 'offline', trouble: 'open', system: 'unknown', normal: 'healthy' } as const satisfies Record<SiteStanding, BoardState>;

function spokeWords(seen: SiteSeen, now: number): string {
  return seen.lastSpokeMs === null ? 'not heard from yet' : `last spoke ${sinceWords(now - seen.lastSpokeMs)} ago`;
}

function siteCard(site: EstateView['sites'][number], view: EstateView): SafeHtml {
  const standing = standingOf(site.seen, view.now, view.staleAfterMs);
  const counts = { alarm: 0, trouble: 0, system: 0 };
  for (const a of site.seen.alarms) counts[a.priority] += 1;
  const loops = site.seen.summary?.loops;
  return html`<li class="card state-${STANDING_SHAPE[standing]}" data-site="${site.seen.siteId}">
  <a class="card-link" href="/sites/${encodeURIComponent(site.seen.siteId)}">
    ${stateShape(STANDING_SHAPE[standing], 40)}
    <span class="card-text">
      <span class="card-name">${site.name}</span>
      <span class="card-state">${STANDING_LABEL[standing]}${standing === 'alarm' && !isReporting(site.seen, view.now, view.staleAfterMs) ? ' · site not reporting' : ''}</span>
      <span class="card-alarm">${counts.alarm} alarm · ${counts.trouble} trouble · ${counts.system} system</span>
      <span class="card-meta">${loops ? `${loops.total} loops, ${loops.healthy} healthy · ` : ''}${spokeWords(site.seen, view.now)}</span>
    </span>
  </a>
</li>`;
}

export function renderEstateBoard(view: EstateView, principal: Principal): string {
  const byId = new Map(view.sites.map((s) => [s.seen.siteId, s]));
  const ordered = orderSites(view.sites.map((s) => s.seen), view.now, view.staleAfterMs).map((seen) => byId.get(seen.siteId)!);
  const notReporting = ordered.filter((s) => !isReporting(s.seen, view.now, view.staleAfterMs)).length;
  return renderPage({
    title: 'Estate',
    siteName: view.estateName,
    principal,
    section: 'board',
    noScriptRefreshSeconds: 30,
    body: html`<h1 class="visually-hidden">Estate</h1>
<p class="summary"><span class="count">${view.sites.length} sites</span><span class="count">${notReporting} not reporting</span><span class="as-of"> · as of ${siteTime(view.now, view.timeZone, view.now)}</span></p>
<ul class="cards">${ordered.map((s) => siteCard(s, view))}</ul>`,
  });
}

function alarmItem(alarm: AlarmPayload, view: EstateView, loopName: (id: string) => string): SafeHtml {
  const at = Date.parse(alarm.raisedAt);
  return html`<li class="card state-${alarm.priority === 'alarm' ? 'tripped' : 'offline'}"><div class="card-link">
    ${stateShape(alarm.priority === 'alarm' ? 'tripped' : 'unknown', 32)}
    <span class="card-text">
      <span class="card-name">${alarm.loopId ? loopName(alarm.loopId) : alarm.source === 'system' ? 'The monitor itself' : alarm.source}</span>
      <span class="card-state">${PRIORITY_LABEL[alarm.priority]}: ${CONDITION_TEXT[alarm.condition].words.split(':')[0]}</span>
      <span class="card-alarm">${ALARM_STATE_LABEL[alarm.state]}${alarm.ackedBy ? ` by ${alarm.ackedBy}` : ''}</span>
      <span class="card-meta">since ${siteTime(at, view.timeZone, view.now)} (${sinceWords(view.now - at)})</span>
    </span></div></li>`;
}

export function renderEstateSite(view: EstateView, siteId: string, principal: Principal): string | null {
  const site = view.sites.find((s) => s.seen.siteId === siteId);
  if (!site) return null;
  const { seen } = site;
  const standing = standingOf(seen, view.now, view.staleAfterMs);
  const loops = Object.values(seen.loops).sort((a, b) => a.name.localeCompare(b.name));
  const loopName = (id: string) => seen.loops[id]?.name ?? id;
  const loopCard = (loop: (typeof loops)[number]) => {
    const state: BoardState = loop.inService ? loop.state : 'out-of-service';
    const since = Date.parse(loop.since);
    return html`<li class="card state-${state}"><div class="card-link">${stateShape(state, 32)}<span class="card-text">
      <span class="card-name">${loop.name}</span>
      <span class="card-state">${BOARD_STATE_LABEL[state]}${loop.intermittent ? ' · intermittent' : ''}</span>
      <span class="card-meta">since ${siteTime(since, view.timeZone, view.now)} (${sinceWords(view.now - since)})${loop.location ? ` · ${loop.location}` : ''}</span>
    </span></div></li>`;
  };
  return renderPage({
    title: site.name,
    siteName: view.estateName,
    principal,
    section: 'none',
    noScriptRefreshSeconds: 30,
    body: html`<h1>${site.name}</h1>
<p class="summary">${STANDING_LABEL[standing]} · ${spokeWords(seen, view.now)}${seen.status && !seen.status.online && seen.status.reason ? ` (${seen.status.reason})` : ''}</p>
${site.url ? html`<p><a class="button button-main" href="${site.url}">Open ${site.name}'s own pages to act</a></p>` : ''}
<section aria-labelledby="h-alarms"><h2 id="h-alarms">Active alarms (${seen.alarms.length})</h2>
${seen.alarms.length > 0 ? html`<ul class="cards">${seen.alarms.map((a) => alarmItem(a, view, loopName))}</ul>` : html`<p>None.</p>`}</section>
<section aria-labelledby="h-loops"><h2 id="h-loops">Loops (${loops.length})</h2>
${loops.length > 0 ? html`<ul class="cards">${loops.map(loopCard)}</ul>` : html`<p>No loop states received yet.</p>`}</section>
<p><a class="button" href="/">Back to the estate</a></p>`,
  });
}

export function renderEstateEvents(view: EstateView, events: ReadonlyArray<{ siteId: string; event: EventPayload }>, principal: Principal): string {
  const name = (id: string) => view.sites.find((s) => s.seen.siteId === id)?.name ?? id;
  return renderPage({
    title: 'Recent events',
    siteName: view.estateName,
    principal,
    section: 'history',
    body: html`<h1>Recent events</h1>
<p class="note">Alarm events heard since this board started, newest first. Each site keeps its full history on its own pages.</p>
${events.length === 0 ? html`<p>None yet.</p>` : html`<ul class="cards">${[...events].reverse().map(({ siteId, event }) => html`<li class="card"><div class="card-link"><span class="card-text">
  <span class="card-name">${name(siteId)} · ${event.kind}</span>
  <span class="card-state">${PRIORITY_LABEL[event.alarm.priority]}: ${CONDITION_TEXT[event.alarm.condition].words.split(':')[0]}${event.alarm.loopId ? ` (${event.alarm.loopId})` : ''}</span>
  <span class="card-meta">${siteTime(Date.parse(event.at), view.timeZone, view.now)} · event ${event.eventNo} · ${event.actor}</span>
</span></div></li>`)}</ul>`}`,
  });
}

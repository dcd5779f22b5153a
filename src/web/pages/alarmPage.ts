import { CONDITION_TEXT } from '../../model/condition.js';
import type { Principal } from '../auth/principal.js';
import { roleAllows } from '../auth/roles.js';
import type { AlarmDetailView } from '../webPorts.js';
import { html, type SafeHtml } from './html.js';
import { renderPage } from './layout.js';
import { agoWords, siteTime, spanWords } from './siteTime.js';
import { stateShape } from './stateShape.js';
import { ALARM_STATE_LABEL, PRIORITY_LABEL, canAcknowledge, canShelve, type BoardState } from './stateWords.js';

export interface AlarmPageData {
  siteName: string;
  timeZone: string;
  now: number;
  alarm: AlarmDetailView;
  maxShelveMinutes: number;
}

const SHELVE_CHOICES_MIN = [30, 60, 120, 240, 480, 720, 1440];

function conditionShape(alarm: AlarmDetailView): BoardState {
  switch (alarm.condition) {
    case 'tripped':
    case 'open':
    case 'shorted':
    case 'offline':
      return alarm.condition;
    default:
      return 'unknown';
  }
}

export function alarmTitle(alarm: AlarmDetailView): string {
  const where = alarm.loopName ?? (alarm.source === 'system' ? 'the monitor' : alarm.source);
  return `${PRIORITY_LABEL[alarm.priority]}: ${where} — ${alarm.condition}`;
}

function when(ms: number, data: AlarmPageData): SafeHtml {
  return html`<time datetime="${new Date(ms).toISOString()}">${siteTime(ms, data.timeZone, data.now)}</time> (${agoWords(data.now - ms)})`;
}

function actions(data: AlarmPageData, principal: Principal): SafeHtml {
  const { alarm } = data;
  if (!roleAllows(principal.role, 'operator')) {
    return html`<p class="note">You can look but not act: your role is ${principal.role}. An admin can make you an operator.</p>`;
  }
  const csrf = html`<input type="hidden" name="csrf" value="${principal.csrfToken ?? ''}">`;
  const parts: SafeHtml[] = [];
  if (canAcknowledge(alarm.state)) {
    parts.push(html`<form method="post" action="/alarms/${alarm.id}/ack" class="panel form-ack">
  <h2>Acknowledge</h2>
  ${csrf}
  <label for="ack-note">Note (optional): what you are doing about it</label>
  <textarea id="ack-note" name="note" rows="3" maxlength="1000"></textarea>
  <button type="submit" class="button button-main">Acknowledge</button>
</form>`);
  }
  if (canShelve(alarm.state)) {
    const choices = SHELVE_CHOICES_MIN.filter((m) => m <= data.maxShelveMinutes);
    if (choices.length === 0) choices.push(data.maxShelveMinutes);
    parts.push(html`<form method="post" action="/alarms/${alarm.id}/shelve" class="panel form-shelve">
  <h2>Shelve</h2>
  <p class="note">Hides the alarm for a while; it comes back by itself.</p>
  ${csrf}
  <label for="shelve-minutes">For</label>
  <select id="shelve-minutes" name="minutes">${choices.map((m) => html`<option value="${m}">${m < 60 ? `${m} min` : `${m / 60} h`}</option>`)}</select>
  <label for="shelve-reason">Reason (required)</label>
  <input id="shelve-reason" name="reason" type="text" maxlength="1000" required>
  <button type="submit" class="button">Shelve</button>
</form>`);
  }
  if (alarm.state === 'shelved') {
    parts.push(html`<form method="post" action="/alarms/${alarm.id}/unshelve" class="panel form-unshelve">
  ${csrf}
  <button type="submit" class="button">Unshelve now</button>
</form>`);
  }
  return html`${parts}`;
}

export function renderAlarmPage(data: AlarmPageData, principal: Principal, flash: string | null): string {
  const { alarm } = data;
  const text = CONDITION_TEXT[alarm.condition];
  const where = alarm.loopName
    ? html`${alarm.loopName}${alarm.location ? html`, ${alarm.location}` : ''}`
    : html`${alarm.source === 'system' ? 'the monitor itself' : html`decoder ${alarm.source}`}`;
  const facts: SafeHtml[] = [
    html`<dt>What</dt><dd>${text.words}</dd>`,
    html`<dt>Where</dt><dd>${where}</dd>`,
    html`<dt>Since</dt><dd>${when(alarm.raisedAtMs, data)}</dd>`,
  ];
  if (alarm.clearedAtMs !== null) facts.push(html`<dt>Back to normal</dt><dd>${when(alarm.clearedAtMs, data)}</dd>`);
  if (alarm.ackedAtMs !== null) {
    facts.push(html`<dt>Acknowledged</dt><dd>${when(alarm.ackedAtMs, data)} by ${alarm.ackedBy ?? 'someone'}${alarm.note ? html`: “${alarm.note}”` : ''}</dd>`);
  }
  if (alarm.state === 'shelved' && alarm.shelvedUntilMs !== null) {
    facts.push(html`<dt>Shelved until</dt><dd>${siteTime(alarm.shelvedUntilMs, data.timeZone, data.now)}${alarm.shelveReason ? html` — ${alarm.shelveReason}` : ''}</dd>`);
  }
  const told =
    alarm.notified.length > 0
      ? html`<ul class="plain-list">${alarm.notified.map((n) => html`<li>${n.contactName} — first told ${when(n.firstQueuedAtMs, data)}</li>`)}</ul>`
      : html`<p class="note">Nobody has been sent a mail about this yet.</p>`;
  const trail =
    alarm.audit.length > 0
      ? html`<ol class="trail">${alarm.audit.map(
          (a) => html`<li><time datetime="${new Date(a.atMs).toISOString()}">${siteTime(a.atMs, data.timeZone, data.now)}</time> <b>${a.action}</b> by ${a.actor}${a.note ? html`: ${a.note}` : ''}</li>`,
        )}</ol>`
      : html`<p class="note">No entries.</p>`;
  const shapeState = conditionShape(alarm);
  const body = html`<div class="status status-${alarm.priority} state-${shapeState}">
  ${stateShape(shapeState, 48)}
  <div>
    <p class="status-priority">${PRIORITY_LABEL[alarm.priority]}</p>
    <h1 class="status-title">${alarm.loopName ?? (alarm.source === 'system' ? 'The monitor' : alarm.source)}: ${alarm.condition}</h1>
    <p class="status-state">${ALARM_STATE_LABEL[alarm.state]}${alarm.active ? '' : ' · condition has cleared'}</p>
  </div>
</div>
<dl class="facts">${facts}</dl>
<section class="panel check"><h2>What to check</h2><p>${text.check}</p></section>
${actions(data, principal)}
${alarm.loopId ? html`<p><a class="button button-quiet" href="/loops/${encodeURIComponent(alarm.loopId)}">The loop and its last 24 hours</a></p>` : ''}
<section><h2>Who was told</h2>${told}</section>
<section><h2>What happened</h2>${trail}</section>`;
  return renderPage({ title: alarmTitle(alarm), siteName: data.siteName, principal, section: 'none', flash, body });
}

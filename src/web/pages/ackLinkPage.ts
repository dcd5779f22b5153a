import { CONDITION_TEXT } from '../../model/condition.js';
import type { AlarmDetailView } from '../webPorts.js';
import { alarmTitle } from './alarmPage.js';
import { html } from './html.js';
import { renderPage } from './layout.js';
import { agoWords, siteTime, spanWords } from './siteTime.js';
import { ALARM_STATE_LABEL, canAcknowledge } from './stateWords.js';

/**
 * The page an acknowledge link from a mail opens. Opening it changes nothing (mail scanners open
 * links); only its button, a POST carrying the token, acknowledges.
 */
export function renderAckConfirmPage(data: {
  siteName: string;
  timeZone: string;
  now: number;
  alarm: AlarmDetailView;
  token: string;
}): string {
  const { alarm } = data;
  const summary = html`<dl class="facts">
  <dt>What</dt><dd>${CONDITION_TEXT[alarm.condition].words}</dd>
  <dt>Since</dt><dd>${siteTime(alarm.raisedAtMs, data.timeZone, data.now)} (${agoWords(data.now - alarm.raisedAtMs)})</dd>
  <dt>Now</dt><dd>${ALARM_STATE_LABEL[alarm.state]}${alarm.state === 'acknowledged' && alarm.ackedBy ? html` by ${alarm.ackedBy}` : ''}</dd>
</dl>`;
  const body = canAcknowledge(alarm.state)
    ? html`<h1>Acknowledge this alarm?</h1>
<p class="status-title">${alarmTitle(alarm)}</p>
${summary}
<form method="post" action="/ack/${data.token}" class="panel">
  <input type="hidden" name="alarm" value="${alarm.id}">
  <label for="ack-note">Note (optional)</label>
  <textarea id="ack-note" name="note" rows="3" maxlength="1000"></textarea>
  <button type="submit" class="button button-main">Acknowledge</button>
</form>
<p class="note">Nothing has been acknowledged yet: only the button does that. The link works once.</p>`
    : html`<h1>Nothing to acknowledge</h1>
<p class="status-title">${alarmTitle(alarm)}</p>
${summary}`;
  return renderPage({ title: 'Acknowledge', siteName: data.siteName, principal: null, body });
}

export function renderAckDonePage(data: { siteName: string; alarm: AlarmDetailView }): string {
  const body = html`<h1>Acknowledged</h1>
<p class="flash">${alarmTitle(data.alarm)} is acknowledged. The people told about it so far hear that it has been.</p>
<p><a class="button" href="/alarms/${data.alarm.id}">Open the alarm (sign-in needed)</a></p>`;
  return renderPage({ title: 'Acknowledged', siteName: data.siteName, principal: null, body });
}

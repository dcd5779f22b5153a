import { readFileSync } from 'node:fs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { AUDIT_ACTIONS, NOTICE_KINDS, type AuditAction } from '../../src/alarms/alarmTypes.js';
import { ALARM_STATES } from '../../src/model/alarmState.js';
import { CONDITIONS, CONDITION_PRIORITY } from '../../src/model/condition.js';
import { newAckTokenId, signAckToken } from '../../src/notify/ackToken.js';
import { composeLifecycleMail } from '../../src/notify/composeLifecycleMail.js';
import { composeNoticeMail } from '../../src/notify/composeNoticeMail.js';
import type { EventView } from '../../src/web/webPorts.js';
import { sampleNoticeAlarm } from '../helpers/sampleAlarm.js';
import { settings } from '../notify/helpers/fixtures.js';
import { ACK_SECRET, session, startTestWeb, testConfig, type Session, type TestWeb } from './fixtures/testWeb.js';

/**
 * Issue 9, item 19, as rules: every page the web server renders, every notice mail (each notice kind
 * for each alarm state), the lifecycle mails, the OpenAPI document and the README are scanned for the
 * forms the first-use review found. A new page or mail that brings one back fails here, whichever it is.
 */
const BANNED: Array<[RegExp, string]> = [
  [/\w\(s\)/, 'a "(s)" plural such as "loop(s)"; count with countOf'],
  [/\b0\.0 s\b/, '"0.0 s" ("just now" or "under a minute")'],
  [/\b0 (minute|second|hour|day)s?\b/, 'a zero count of time ("0 minutes"); say "no minute"'],
  [/\blog[- ]in\b/i, '"log in"; people sign in'],
  [/\bLog ?in\b/, '"Login"; people sign in'],
  [/back to normal[,(]? ?(but )?(not|nobody)/, 'an old wording of "back to normal — still needs acknowledging"'],
  [/not yet acknowledged|normal again/, 'an old wording of the standing'],
];

/** Codes of the program's own that must never reach a reader as words. */
const CODES: Array<[RegExp, string]> = [
  [/\b(returned-unacknowledged|link-noisy|decoder-fault|mail-failing|storage-failing|broker-unreachable|state-change)\b/, 'a state or condition code'],
  [new RegExp(`\\b(${AUDIT_ACTIONS.filter((a) => a.includes('-')).join('|')})\\b`), 'an audit action code'],
  [/\b(raise|clear|acknowledge|shelve|unshelve|close|repeat) (tripped|open|shorted|offline)\b/, "the store's own audit summary (action code, condition code)"],
  [/\bshorted\b/, '"shorted" (the state reads "short circuit")'],
  [/→/, "the store's own summary arrow"],
  [/\.eml\b|\/tmp\/|\/var\/lib\//, 'a file path'],
];

function scan(text: string, where: string, rules: Array<[RegExp, string]>): string[] {
  return rules.filter(([pattern]) => pattern.test(text)).map(([pattern, why]) => `${where}: ${why} — "${pattern.exec(text)![0]}" in …${text.slice(Math.max(0, text.search(pattern) - 40), text.search(pattern) + 40)}…`);
}

/** What a reader sees of a page: text without markup, scripts or attribute values. */
function visibleText(markup: string): string {
  return markup
    .replace(/<script[\s\S]*?<\/script>/g, ' ')
    .replace(/<style[\s\S]*?<\/style>/g, ' ')
    .replace(/<svg[\s\S]*?<\/svg>/g, (svg) => svg.replace(/<[^>]*>/g, ' '))
    .replace(/<[^>]*>/g, ' ')
    .replace(/&amp;/g, '&')
    .replace(/&lt;/g, '<')
    .replace(/&gt;/g, '>')
    .replace(/&quot;/g, '"')
    .replace(/&#39;/g, "'")
    .replace(/\s+/g, ' ');
}

/** Audit notes as the alarm engine, the escalation and the outbox write them (see src/alarms, src/notify). */
const ENGINE_NOTES: Record<AuditAction, string | null> = {
  raise: 'alarm: tripped on seed-store; policy default',
  clear: 'condition cleared; latched, so it stays until acknowledged',
  acknowledge: 'on my way with a torch',
  shelve: 'heater being replaced (until 2026-12-01T22:00:00.000Z)',
  unshelve: null,
  'shelve-expired': 'shelve time ended',
  'out-of-service': 'rewiring the granary',
  'return-to-service': null,
  'escalation-step': 'step 2 of 2: yard-phone',
  repeat: 'repeat 3 of 10: office, yard-phone',
  'mail-sent': '[ALARM] Larkfield Smallholding: Seed store — tripped → office@larkfield.example (written to /var/lib/pairwatch/outbox/0001.eml)',
  'mail-failed': '[ALARM] Larkfield Smallholding: Seed store — tripped: attempt 2 failed: connect ECONNREFUSED 127.0.0.1:25; next try 2026-12-01T20:05:00.000Z',
  close: null,
  'mail-reply': 'reply <abc@mail.example> from office@larkfield.example; dkim=pass spf=pass',
  'mail-dropped': '[ALARM] Larkfield Smallholding: Seed store — tripped, not acknowledged: not sent: a reminder made obsolete, alarm 7 acknowledged before it could go',
};

let web: TestWeb;
let otto: Session;

beforeAll(async () => {
  web = await startTestWeb({ config: testConfig({ decoders: [{ id: 'house', name: 'Farmhouse decoder', port: 'tcp://192.168.7.20:4001', inputs: 8 }] }) });
  otto = await session(web.app, 'otto');
  const t0 = web.clock.now;
  // Every audit action on the seed-store alarm's trail and in the history, with the notes the monitor writes.
  const seed = web.site.alarms.find((a) => a.id === 7)!;
  seed.audit = AUDIT_ACTIONS.map((action, i) => ({ id: 100 + i, atMs: t0 - (20 - i) * 60_000, actor: action === 'acknowledge' || action === 'shelve' || action === 'out-of-service' ? 'otto' : 'system', action, note: ENGINE_NOTES[action] }));
  const history: EventView[] = AUDIT_ACTIONS.map((action, i) => ({
    id: `a${i}`, atMs: t0 - i * 1000, loopId: 'seed-store', kind: 'audit', priority: 'alarm',
    summary: `${action} tripped${ENGINE_NOTES[action] ? ` — ${ENGINE_NOTES[action]}` : ''}`,
    actor: seed.audit[i]!.actor, fromState: null, toState: null, action, note: ENGINE_NOTES[action], condition: 'tripped',
  }));
  const states: EventView[] = (['healthy', 'tripped', 'open', 'shorted', 'offline', 'unknown'] as const).map((to, i) => ({
    id: `s${i}`, atMs: t0 - 30_000 - i * 1000, loopId: 'pump-shed', kind: 'state-change', priority: 'trouble',
    summary: `healthy → ${to}: loop current above the high threshold for 200 ms`, actor: null, fromState: 'healthy', toState: to,
  }));
  web.site.events.unshift(...history, ...states);
  // A decoder trouble, and a trouble whose mail link is opened.
  web.site.alarms.push({
    id: 21, loopId: null, source: 'house', condition: 'link-noisy', priority: 'trouble', state: 'returned-unacknowledged', active: false,
    raisedAtMs: t0 - 600_000, clearedAtMs: t0 - 60_000, ackedAtMs: null, ackedBy: null, note: null, shelvedUntilMs: null, shelveReason: null,
    loopName: null, location: null, notified: [], audit: [],
  });
});
afterAll(async () => {
  await web.close();
});

const get = async (url: string, cookie = otto.cookie) => (await web.app.inject({ method: 'GET', url, headers: { cookie } })).body;

async function everyPage(): Promise<Array<[string, string]>> {
  const urls = ['/', '/board/list', '/history?period=all', '/history.csv?period=all', ...web.site.loops.map((l) => `/loops/${l.id}`), ...web.site.alarms.map((a) => `/alarms/${a.id}`)];
  const pages: Array<[string, string]> = [];
  for (const url of urls) pages.push([url, url.endsWith('.csv?period=all') ? await get(url) : visibleText(await get(url))]);
  pages.push(['/login', visibleText(await get('/login', ''))]);
  for (const alarm of web.site.alarms) {
    const token = signAckToken({ alarmId: alarm.id, contactId: 'office', expiresAt: web.clock.now + 3_600_000, tokenId: newAckTokenId() }, ACK_SECRET);
    pages.push([`/ack/… (alarm ${alarm.id})`, visibleText(await get(`/ack/${token}`, ''))]);
  }
  return pages;
}

function everyMail(): Array<[string, string]> {
  const t0 = Date.parse('2026-12-01T03:00:00.000Z');
  const mails: Array<[string, string]> = [];
  for (const condition of CONDITIONS) {
    for (const state of ALARM_STATES) {
      for (const active of [true, false]) {
        for (const kind of NOTICE_KINDS) {
          const onLoop = CONDITION_PRIORITY[condition] !== 'system' && condition !== 'offline' && condition !== 'link-noisy' && condition !== 'decoder-fault';
          const alarm = sampleNoticeAlarm(t0, {
            condition, priority: CONDITION_PRIORITY[condition], state, active,
            loopId: onLoop ? 'well' : null, source: onLoop ? 'well' : CONDITION_PRIORITY[condition] === 'system' ? 'system' : 'main',
            clearedAt: active ? null : t0 + 60_000,
            ...(state === 'acknowledged' || state === 'normal' ? { ackedAt: t0 + 30_000, ackedBy: 'Farm office (mail link)', note: 'on it' } : {}),
          });
          const mail = composeNoticeMail(
            { contactId: 'office', dueAt: t0, notices: [{ id: 1, contactId: 'office', alarmId: 1, kind, createdAt: t0, dueAt: t0, actor: null, note: null }] },
            { ...settings(), now: t0 + 300_000, alarms: new Map([[1, alarm]]), recipients: new Map([[1, ['office', 'oncall']]]) },
          );
          mails.push([`${condition}/${state}/${active}/${kind}`, `${mail.subject}\n${mail.text}\n${visibleText(mail.html)}`]);
        }
      }
    }
  }
  const envelope = { from: 'pairwatch <monitor@ridgeway.example>', to: ['office@ridgeway.example'], newMessageId: () => '<x@ridgeway.example>' };
  for (const loopCount of [0, 1, 2]) {
    for (const event of ['started', 'stopped'] as const) {
      const mail = composeLifecycleMail(event, { siteName: 'Ridgeway Farm', timeZone: 'Europe/London', publicUrl: 'https://m.example', at: t0, loopCount, decoderCount: loopCount, nextReportAt: null }, envelope);
      mails.push([`lifecycle ${event} ${loopCount}`, `${mail.subject}\n${mail.text}`]);
    }
  }
  return mails;
}

describe('one word for one thing (issue 9, item 19): rules over everything rendered', () => {
  it('no page shows a banned form or a code of the program', async () => {
    const problems: string[] = [];
    for (const [where, text] of await everyPage()) {
      problems.push(...scan(text, where, BANNED));
      // The CSV keeps its machine columns (kind, from_state, to_state); its summary column is checked with the pages' words.
      problems.push(...scan(where.includes('.csv') ? text.split('\r\n').map((l) => l.split(',').slice(5, 6).join('')).join('\n') : text, where, CODES));
    }
    expect(problems).toEqual([]);
  });

  it('the audit trail and history say what happened in people\'s words, with names, not ids or paths', async () => {
    const trail = visibleText(await get('/alarms/7'));
    const history = visibleText(await get('/history?period=all&loop=seed-store'));
    for (const text of [trail, history]) {
      expect(text).toContain('raised');
      expect(text).toContain('mailed Farm office');
      expect(text).toContain('step 2: told Yard phone');
      expect(text).toContain('reminder 3: told Farm office, Yard phone');
      expect(text).not.toContain('yard-phone');
      expect(text).not.toContain('office@larkfield.example');
      expect(text).not.toContain('ECONNREFUSED');
    }
  });

  it('a trouble is called a trouble: no "Acknowledge this alarm?" on one', async () => {
    for (const alarm of web.site.alarms.filter((a) => a.priority !== 'alarm')) {
      const token = signAckToken({ alarmId: alarm.id, contactId: 'office', expiresAt: web.clock.now + 3_600_000, tokenId: newAckTokenId() }, ACK_SECRET);
      const text = visibleText(await get(`/ack/${token}`, ''));
      expect(text).not.toMatch(/this alarm/i);
      if (alarm.state === 'unacknowledged' || alarm.state === 'returned-unacknowledged') expect(text).toContain('Acknowledge this trouble?');
    }
  });

  it('the board summary counts every group the board shows', async () => {
    const board = await get('/');
    const headings = [...board.matchAll(/<h2 id="g-[^"]*">([^<]*) \((\d+)\)<\/h2>/g)].map((m) => ({ words: m[1]!.toLowerCase(), n: Number(m[2]) }));
    const counts = [...board.matchAll(/<span class="count count-[^"]*">(\d+) ([^<]*)<\/span>/g)].map((m) => ({ words: m[2]!, n: Number(m[1]) }));
    expect(headings.length).toBeGreaterThanOrEqual(4);
    expect(counts.map((c) => c.n)).toEqual(headings.map((h) => h.n));
    for (const [i, h] of headings.entries()) expect(h.words.startsWith(counts[i]!.words.replace(/s$/, ''))).toBe(true);
  });

  it('no mail, for any condition, state, notice kind or count, shows a banned form or a code', () => {
    const problems: string[] = [];
    for (const [where, text] of everyMail()) problems.push(...scan(text, where, [...BANNED, ...CODES]));
    expect(problems.slice(0, 10)).toEqual([]);
  });

  it('the README and the API docs keep the same words', async () => {
    const readme = readFileSync('README.md', 'utf8');
    expect(scan(readme, 'README.md', BANNED)).toEqual([]);
    const doc = await get('/api/v1/openapi.json');
    expect(scan(doc, 'openapi.json', BANNED)).toEqual([]);
    expect(doc).toContain('back to normal — still needs acknowledging');
    expect(readme).toContain('back to normal — still needs acknowledging');
  });
});

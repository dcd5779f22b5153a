import { describe, expect, it } from 'vitest';
import { decideReply, type KnownMail, type ReplyDecisionContext } from '../../src/inbox/decideReply.js';
import type { ParsedReply } from '../../src/inbox/parsedReply.js';
import { signReplyToken, replyTokenKey } from '../../src/notify/replyToken.js';

const secret = Buffer.alloc(32, 7);
const now = Date.UTC(2026, 11, 1, 20, 0, 0);
const mailId = '<m1@pairwatch.farm.test>';
const mail: KnownMail = { messageId: mailId, kind: 'notice', alarmIds: [4] };
const contacts = [
  { id: 'office', name: 'Farm office', email: 'office@farm.test' },
  { id: 'ann', name: 'Ann', email: 'ann@farm.test' },
];
const token = signReplyToken({ messageId: mailId, recipient: 'office', expiresAt: now + 3_600_000 }, secret);

const ctx = (over: Partial<ReplyDecisionContext> = {}): ReplyDecisionContext => ({
  now, secret, contacts, ownAddresses: ['pairwatch@farm.test'], ownMessageIdDomain: 'pairwatch.farm.test',
  knownMails: new Map([[mailId, mail]]), spentTokens: new Set(), shelvers: new Set(['office']), requireDkim: false, maxShelveMs: 4 * 3_600_000, ...over,
});
const reply = (over: Partial<ParsedReply> = {}): ParsedReply => ({
  messageId: '<r1@mail.farm.test>', from: 'office@farm.test', subject: `Re: [ALARM] Farm: Barn tripped [ref ${token}]`,
  inReplyTo: [mailId], references: [mailId], headers: new Map(), contentType: 'text/plain', reportType: null,
  text: `OK, on my way\n\nOn Tue someone wrote:\n> Reference: ${token}\n`, attachedText: '', auth: { dkim: 'none', summary: 'none' }, ...over,
});

describe('decideReply', () => {
  it('"OK, on my way" acknowledges with the note "on my way"', () => {
    const d = decideReply(reply(), ctx());
    expect(d).toMatchObject({ verdict: 'acknowledge', note: 'on my way', contact: { id: 'office' } });
  });
  it('a trimmed quote still works: the token is in the subject', () => {
    expect(decideReply(reply({ text: 'ack' }), ctx())).toMatchObject({ verdict: 'acknowledge', note: null });
  });
  it('refuses a forged From (another contact without their own token)', () => {
    expect(decideReply(reply({ from: 'ann@farm.test' }), ctx())).toMatchObject({ verdict: 'refused', reason: 'token-other-contact' });
  });
  it('refuses a stranger, a spent token, an expired one and a vacation reply (RFC 3834 §5.1)', () => {
    expect(decideReply(reply({ from: 'evil@x.test' }), ctx())).toMatchObject({ reason: 'token-other-contact' });
    expect(decideReply(reply(), ctx({ spentTokens: new Set([replyTokenKey(token)]) }))).toMatchObject({ reason: 'token-spent' });
    expect(decideReply(reply(), ctx({ now: now + 7_200_000 }))).toMatchObject({ reason: 'token-expired' });
    expect(decideReply(reply({ headers: new Map([['auto-submitted', ['auto-replied']]]) }), ctx())).toMatchObject({ reason: 'auto-reply' });
  });
  it('refuses a bounce (RFC 3464 multipart/report) and list mail (RFC 2919 List-Id)', () => {
    expect(decideReply(reply({ contentType: 'multipart/report' }), ctx())).toMatchObject({ reason: 'delivery-report' });
    expect(decideReply(reply({ headers: new Map([['list-id', ['<x.farm.test>']]]) }), ctx())).toMatchObject({ reason: 'mailing-list' });
  });
  it('leaves mail that has nothing to do with us alone', () => {
    expect(decideReply(reply({ subject: 'hello', text: 'hi', inReplyTo: [], references: [] }), ctx())).toEqual({ verdict: 'not-ours' });
  });
  it('shelves for an operator, capped by max_shelve', () => {
    expect(decideReply(reply({ text: 'shelve 8h cows in the paddock' }), ctx())).toMatchObject({ verdict: 'shelve', durationMs: 4 * 3_600_000, capped: true });
    expect(decideReply(reply({ text: 'shelve 1h x' }), ctx({ shelvers: new Set() }))).toMatchObject({ reason: 'shelve-not-allowed' });
  });
  it('refuses when DKIM is required and fails', () => {
    expect(decideReply(reply(), ctx({ requireDkim: true }))).toMatchObject({ reason: 'dkim-failed' });
  });
  it('RFC 2369 list fields mark list mail even without List-Id', () => {
    const headers = new Map([['list-unsubscribe', ['<mailto:leave@lists.farm.test>']]]);
    expect(decideReply(reply({ headers }), ctx())).toMatchObject({ verdict: 'refused', reason: 'mailing-list' });
  });

  it('a bounce that names our mail only in its returned header part (RFC 3464 §2) is ours, and refused', () => {
    const bounce = reply({ from: 'delivery@mx.farm.test', subject: 'Undelivered Mail', inReplyTo: [], references: [], text: 'could not be delivered', contentType: 'multipart/report', attachedText: `Message-ID: ${mailId}\n` });
    expect(decideReply(bounce, ctx())).toMatchObject({ verdict: 'refused', reason: 'delivery-report' });
  });

  it('the token in the address the reply went to (a +subaddress, RFC 5233) counts when quote and subject tag are gone', () => {
    const headers = new Map([['to', [`alarms+${token}@farm.test`]]]);
    expect(decideReply(reply({ subject: 'Re: barn', text: 'ok', headers }), ctx())).toMatchObject({ verdict: 'acknowledge' });
    expect(decideReply(reply({ subject: 'Re: barn', text: 'ok' }), ctx())).toMatchObject({ verdict: 'refused', reason: 'no-token' });
  });
});

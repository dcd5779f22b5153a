import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { newAckTokenId, signAckToken } from '../../src/notify/ackToken.js';
import { ACK_SECRET, startTestWeb, type TestWeb } from './fixtures/testWeb.js';

let web: TestWeb;
beforeEach(async () => {
  web = await startTestWeb();
});
afterEach(async () => {
  await web.close();
});

const HOUR = 3_600_000;
const tokenFor = (alarmId: number, expiresAt = web.clock.now + HOUR, secret = ACK_SECRET, contactId = 'office') =>
  signAckToken({ alarmId, contactId, expiresAt, tokenId: newAckTokenId() }, secret);
const postAck = (token: string, fields: Record<string, string>) =>
  web.app.inject({
    method: 'POST',
    url: `/ack/${token}`,
    headers: { 'content-type': 'application/x-www-form-urlencoded' },
    payload: new URLSearchParams(fields).toString(),
  });

describe('acknowledge links from mail', () => {
  it('GET shows a confirmation page and acknowledges nothing, however often it is opened', async () => {
    const token = tokenFor(7);
    for (let i = 0; i < 3; i++) {
      const res = await web.app.inject({ method: 'GET', url: `/ack/${token}` });
      expect(res.statusCode).toBe(200);
      expect(res.body).toContain('Acknowledge this alarm?');
      expect(res.body).toContain(`action="/ack/${token}"`);
      expect(res.body).toContain('name="alarm" value="7"');
      expect(res.headers['cache-control']).toBe('no-store');
      expect(res.headers['referrer-policy']).toBe('no-referrer');
    }
    expect(web.site.calls).toEqual([]);
    expect(web.site.alarms.find((a) => a.id === 7)!.state).toBe('unacknowledged');
  });

  it('HEAD is as harmless as GET', async () => {
    const token = tokenFor(7);
    const res = await web.app.inject({ method: 'HEAD', url: `/ack/${token}` });
    expect(res.statusCode).toBe(200);
    expect(web.site.calls).toEqual([]);
  });

  it('POST acknowledges once, as the contact the link was mailed to, with the note; no session or CSRF token needed', async () => {
    const token = tokenFor(7);
    const res = await postAck(token, { alarm: '7', note: 'seen it, on my way' });
    expect(res.statusCode).toBe(200);
    expect(res.body).toContain('Acknowledged');
    expect(web.site.calls).toEqual([{ command: 'acknowledge', args: [7, 'Farm office (mail link)', 'seen it, on my way'] }]);

    const replay = await postAck(token, { alarm: '7' });
    expect(replay.statusCode).toBe(410);
    expect(replay.body).toContain('used already');
    const reopened = await web.app.inject({ method: 'GET', url: `/ack/${token}` });
    expect(reopened.statusCode).toBe(410);
    expect(web.site.calls).toHaveLength(1);
  });

  it('the note on the link page follows the free-text rule: line breaks folded, controls refused without spending the link (issue 9)', async () => {
    const refused = tokenFor(7);
    const bad = await postAck(refused, { alarm: '7', note: 'ok\u0000cut' });
    expect(bad.statusCode).toBe(400);
    expect(web.site.calls).toEqual([]);
    expect((await web.app.inject({ method: 'GET', url: `/ack/${refused}` })).statusCode).toBe(200);
    const res = await postAck(refused, { alarm: '7', note: 'seen\r\nAcknowledge: http://evil.example/' });
    expect(res.statusCode).toBe(200);
    expect(web.site.calls).toEqual([{ command: 'acknowledge', args: [7, 'Farm office (mail link)', 'seen Acknowledge: http://evil.example/'] }]);
  });

  it('a link for a contact no longer in the config still acknowledges, under the contact id', async () => {
    const res = await postAck(tokenFor(7, web.clock.now + HOUR, ACK_SECRET, 'gone-away'), { alarm: '7' });
    expect(res.statusCode).toBe(200);
    expect(web.site.calls).toEqual([{ command: 'acknowledge', args: [7, 'gone-away (mail link)', null] }]);
  });

  it('a refused acknowledgement (409) leaves the link unspent', async () => {
    const token = tokenFor(8); // alarm 8 is acknowledged already
    const res = await postAck(token, { alarm: '8' });
    expect(res.statusCode).toBe(409);
    expect(web.db.prepare('SELECT count(*) AS n FROM used_ack_tokens').get()).toEqual({ n: 0 });
  });

  it('refuses a forged token (signed with another key, or altered)', async () => {
    const otherKey = tokenFor(7, web.clock.now + HOUR, Buffer.alloc(32, 9));
    const good = tokenFor(7);
    const altered = good.replace(/^a2\.7\./, 'a2.8.');
    for (const token of [otherKey, altered]) {
      expect((await web.app.inject({ method: 'GET', url: `/ack/${token}` })).statusCode).toBe(403);
      const res = await postAck(token, { alarm: token === altered ? '8' : '7' });
      expect(res.statusCode).toBe(403);
      expect(res.body).toContain('not made by this monitor');
    }
    expect(web.site.calls).toEqual([]);
  });

  it('refuses a malformed token with a plain page', async () => {
    const res = await web.app.inject({ method: 'GET', url: '/ack/%3Cscript%3Ealert(1)%3C%2Fscript%3E' });
    expect(res.statusCode).toBe(404);
    expect(res.headers['content-type']).toMatch(/^text\/html/);
    expect(res.body).not.toContain('<script>alert');
  });

  it('refuses an expired token', async () => {
    const token = tokenFor(7, web.clock.now + HOUR);
    web.clock.now += HOUR;
    expect((await web.app.inject({ method: 'GET', url: `/ack/${token}` })).statusCode).toBe(410);
    const res = await postAck(token, { alarm: '7' });
    expect(res.statusCode).toBe(410);
    expect(res.body).toContain('expired');
    expect(web.site.calls).toEqual([]);
  });

  it('refuses a token used for another alarm than the one posted', async () => {
    const tokenFor8 = tokenFor(8);
    const res = await postAck(tokenFor8, { alarm: '7' });
    expect(res.statusCode).toBe(403);
    expect(res.body).toContain('different alarm');
    const missing = await postAck(tokenFor(7), {});
    expect(missing.statusCode).toBe(403);
    expect(web.site.calls).toEqual([]);
  });

  it('refuses a token for an alarm that does not exist', async () => {
    const res = await postAck(tokenFor(4040), { alarm: '4040' });
    expect(res.statusCode).toBe(404);
    expect(web.site.calls).toEqual([]);
  });

  it('an alarm acknowledged meanwhile shows "nothing to acknowledge" instead of a button', async () => {
    const token = tokenFor(8); // alarm 8 is acknowledged in the fixture
    const res = await web.app.inject({ method: 'GET', url: `/ack/${token}` });
    expect(res.statusCode).toBe(200);
    expect(res.body).toContain('Nothing to acknowledge');
    expect(res.body).not.toContain('<form method="post" action="/ack/');
  });
});

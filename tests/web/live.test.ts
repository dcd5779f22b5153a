import { request, type IncomingMessage } from 'node:http';
import type { AddressInfo } from 'node:net';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { startTestWeb, type TestWeb } from './fixtures/testWeb.js';

let web: TestWeb;
let base: string;
beforeEach(async () => {
  web = await startTestWeb();
  await web.app.listen({ host: '127.0.0.1', port: 0 });
  base = `http://127.0.0.1:${(web.app.server.address() as AddressInfo).port}`;
});
afterEach(async () => {
  await web.close();
});

function open(headers: Record<string, string>): Promise<IncomingMessage> {
  return new Promise((resolve, reject) => {
    request(`${base}/events/stream`, { headers }, resolve).on('error', reject).end();
  });
}

/** Collects the stream's text until `until` matches; resolves on the event, never on a timer. */
function readUntil(res: IncomingMessage, until: RegExp): Promise<string> {
  return new Promise((resolve, reject) => {
    let text = '';
    const onData = (chunk: Buffer) => {
      text += chunk.toString('utf8');
      if (until.test(text)) {
        res.off('data', onData);
        resolve(text);
      }
    };
    res.on('data', onData);
    res.on('error', reject);
    res.on('end', () => resolve(text));
  });
}

describe('/events/stream (server-sent events)', () => {
  it('needs credentials', async () => {
    const res = await open({});
    expect(res.statusCode).toBe(401);
    res.resume();
  });

  it('sends an event for each change the daemon announces, and unsubscribes when the client goes', async () => {
    const res = await open({ authorization: `Bearer ${web.tokens.viewer}`, accept: 'text/event-stream' });
    expect(res.statusCode).toBe(200);
    expect(res.headers['content-type']).toBe('text/event-stream; charset=utf-8');
    expect(res.headers['content-security-policy']).toContain("default-src 'none'");
    await readUntil(res, /: connected\n\n/);
    expect(web.site.live.listenerCount()).toBe(1);

    const got = readUntil(res, /event: alarms\n/);
    web.site.live.emit({ type: 'loops' });
    web.site.live.emit({ type: 'alarms' });
    const text = await got;
    // WHATWG HTML "Server-sent events": a field per line, events ended by a blank line.
    expect(text).toContain('event: loops\ndata: {"type":"loops"}\n\n');
    expect(text).toContain('event: alarms\ndata: {"type":"alarms"}\n\n');

    const gone = new Promise<void>((resolve) => res.once('close', () => resolve()));
    res.destroy();
    await gone;
    await expect.poll(() => web.site.live.listenerCount()).toBe(0);
  });

  it('a command from the API reaches a listening board', async () => {
    const res = await open({ authorization: `Bearer ${web.tokens.viewer}` });
    await readUntil(res, /: connected\n\n/);
    const got = readUntil(res, /event: alarms\n/);
    const ack = await fetch(`${base}/api/v1/alarms/7/ack`, {
      method: 'POST',
      headers: { authorization: `Bearer ${web.tokens.operator}`, 'content-type': 'application/json' },
      body: JSON.stringify({ note: 'on it' }),
    });
    expect(ack.status).toBe(200);
    expect(await got).toContain('event: alarms');
    res.destroy();
  });

  it('closing the server ends open streams instead of hanging', async () => {
    const res = await open({ authorization: `Bearer ${web.tokens.viewer}` });
    await readUntil(res, /: connected\n\n/);
    const ended = new Promise<void>((resolve) => res.once('close', () => resolve()));
    await web.app.close();
    await ended;
  });
});

import { it, expect } from 'vitest';
import { ImapFlow } from 'imapflow';
import { startDovecot } from '../helpers/dovecot.js';
it('the throwaway Dovecot takes a login, an APPEND and offers IDLE (RFC 2177)', async () => {
  const d = await startDovecot();
  try {
    const c = new ImapFlow({ host: d.host, port: d.port, secure: false, auth: { user: d.user, pass: d.pass }, logger: false });
    await c.connect();
    await c.append('INBOX', 'From: a@b.test\r\nSubject: x\r\nMessage-ID: <1@b.test>\r\n\r\nhello\r\n');
    const lock = await c.getMailboxLock('INBOX');
    const all = await c.fetchAll('1:*', { uid: true, source: true }, { uid: true });
    lock.release();
    await c.logout();
    expect(all.length).toBe(1);
    expect(c.capabilities.has('IDLE')).toBe(true);
  } catch (e) { console.log(d.log()); throw e; } finally { await d.close(); }
});

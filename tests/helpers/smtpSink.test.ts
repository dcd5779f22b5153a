import { connect } from 'node:net';
import { afterEach, describe, expect, it } from 'vitest';
import { startSmtpSink, type SmtpSink } from './smtpSink.js';
import { waitFor } from './waitFor.js';

/**
 * The fault suite kills the daemon with -9 while it may be mid-way through an SMTP session, so the
 * sink sees a connection reset. That must be recorded, not thrown: an unhandled 'error' on the
 * server fails the whole test run (it once failed CI after every test had passed).
 */
let sink: SmtpSink | undefined;
afterEach(async () => {
  await sink?.close();
  sink = undefined;
});

describe('the test SMTP sink', () => {
  it('records a client that resets its connection mid-session and keeps taking mail', async () => {
    sink = await startSmtpSink({ auth: false });
    const port = sink.port;
    // smtp-server passes over a reset before MAIL FROM quietly; inside a transaction it re-emits it.
    await new Promise<void>((resolve, reject) => {
      const socket = connect(port, '127.0.0.1');
      socket.on('error', reject);
      const script = ['EHLO killed.example', 'MAIL FROM:<monitor@farm.example>', 'RCPT TO:<office@farm.example>'];
      let heard = '';
      socket.on('data', (chunk: Buffer) => {
        heard += chunk.toString('latin1');
        // Each reply ends with a line "NNN text"; send the next command once it is complete.
        if (!/(^|\r\n)\d{3} [^\r\n]*\r\n$/.test(heard)) return;
        heard = '';
        const next = script.shift();
        if (next) socket.write(`${next}\r\n`);
        else {
          // An RST instead of a FIN, as the kernel sends for a process killed with -9 mid-session.
          socket.resetAndDestroy();
          resolve();
        }
      });
    });
    await waitFor(() => sink!.connectionErrors.length > 0, 5000, () => 'the sink to record the reset');
    expect(sink.connectionErrors[0]).toMatchObject({ code: 'ECONNRESET' });

    // The server still answers the next sender.
    const greeting = await new Promise<string>((resolve, reject) => {
      const socket = connect(port, '127.0.0.1');
      socket.on('error', reject);
      socket.once('data', (chunk: Buffer) => {
        socket.end('QUIT\r\n');
        resolve(chunk.toString('latin1'));
      });
    });
    expect(greeting).toMatch(/^220 /);
  });
});

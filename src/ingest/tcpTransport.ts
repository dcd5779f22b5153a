import { connect } from 'node:net';
import type { OpenTransport } from './linkTypes.js';
import { describeLinkError } from './describeLinkError.js';

/** A decoder behind a serial-to-network box: raw bytes over TCP. */
export function tcpTransport(host: string, port: number, connectTimeoutMs = 5000): OpenTransport {
  const target = `tcp://${host.includes(':') ? `[${host}]` : host}:${port}`;
  return ({ onData, onEnd }) =>
    new Promise((resolve, reject) => {
      const socket = connect({ host, port });
      let open = false;
      let closing = false;
      let lastError: unknown = null;
      socket.setTimeout(connectTimeoutMs);
      socket.once('timeout', () => {
        if (!open) socket.destroy(Object.assign(new Error('connect timed out'), { code: 'ETIMEDOUT' }));
      });
      socket.on('error', (err) => {
        lastError = err;
        if (!open) reject(err);
      });
      socket.once('connect', () => {
        open = true;
        socket.setTimeout(0);
        socket.setKeepAlive(true, 10_000);
        socket.setNoDelay(true);
        resolve({
          close: () =>
            new Promise<void>((done) => {
              closing = true;
              if (socket.destroyed) return done();
              socket.once('close', () => done());
              socket.destroy();
            }),
        });
      });
      socket.on('data', (chunk: Buffer) => onData(chunk.toString('latin1')));
      socket.on('close', () => {
        if (!open || closing) return;
        onEnd(lastError ? describeLinkError(lastError, target) : `${target} closed the connection`);
      });
    });
}

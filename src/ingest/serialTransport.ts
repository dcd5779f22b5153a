import { SerialPort } from 'serialport';
import { describeLinkError } from './describeLinkError.js';
import type { OpenTransport } from './linkTypes.js';

/** A decoder on a serial device, 8N1 at the given speed. */
export function serialTransport(path: string, baud: number): OpenTransport {
  return async ({ onData, onEnd }) => {
    const port = new SerialPort({ path, baudRate: baud, dataBits: 8, parity: 'none', stopBits: 1, autoOpen: false });
    await new Promise<void>((resolve, reject) => port.open((err) => (err ? reject(err) : resolve())));
    let ended = false;
    let closing = false;
    let lastError: unknown = null;
    port.on('data', (chunk: Buffer) => onData(chunk.toString('latin1')));
    port.on('error', (err) => {
      // Errors come before a close or with none; either way the link goes down and retries.
      lastError = err;
      if (!port.isOpen && !ended && !closing) {
        ended = true;
        onEnd(describeLinkError(err, path));
      }
    });
    port.on('close', (err: unknown) => {
      if (ended || closing) return;
      ended = true;
      onEnd(err ? describeLinkError(err, path) : lastError ? describeLinkError(lastError, path) : `${path} was closed`);
    });
    return {
      close: () =>
        new Promise<void>((resolve) => {
          closing = true;
          if (!port.isOpen) return resolve();
          port.close(() => resolve());
        }),
    };
  };
}

import { connect } from 'node:net';

/**
 * A decoder's byte stream, opened for a short look by `pairwatch doctor`: a serial device through
 * serialport, or a serial-to-network box over raw TCP (`tcp://host:port`). Bytes are handed on as
 * latin1 text (one character per byte), as the daemon's links do.
 */
export interface DecoderStream {
  onData(listener: (text: string) => void): void;
  /** Called once if the other end goes away before `close()`. */
  onEnd(listener: (reason: string) => void): void;
  close(): Promise<void>;
}

export const OPEN_FAILURES = ['missing', 'denied', 'busy', 'refused', 'timeout', 'other'] as const;
export type OpenFailureKind = (typeof OPEN_FAILURES)[number];

export class OpenFailure extends Error {
  readonly code = 'PW_DOCTOR_OPEN_FAILED';
  constructor(
    readonly kind: OpenFailureKind,
    message: string,
  ) {
    super(message);
    this.name = 'OpenFailure';
  }
}

export type OpenDecoderStream = (port: string, baud: number, timeoutMs: number) => Promise<DecoderStream>;

/** Sorts an open error into a kind the doctor can give a fix for. Messages differ by binding and OS. */
export function classifyOpenError(err: unknown): OpenFailure {
  const e = err as NodeJS.ErrnoException;
  const message = (e?.message ?? String(err)).split('\n')[0]!;
  const code = e?.code ?? '';
  if (code === 'ENOENT' || /no such file|not found/i.test(message)) return new OpenFailure('missing', message);
  if (code === 'EACCES' || code === 'EPERM' || /permission denied|access denied/i.test(message)) return new OpenFailure('denied', message);
  if (code === 'EBUSY' || /cannot lock|resource (temporarily )?(unavailable|busy)|device or resource busy/i.test(message)) {
    return new OpenFailure('busy', message);
  }
  if (code === 'ECONNREFUSED' || code === 'EHOSTUNREACH' || code === 'ENETUNREACH' || code === 'ENOTFOUND' || code === 'EAI_AGAIN') {
    return new OpenFailure('refused', message);
  }
  if (code === 'ETIMEDOUT') return new OpenFailure('timeout', message);
  return new OpenFailure('other', message);
}

export const openDecoderStream: OpenDecoderStream = (port, baud, timeoutMs) =>
  port.startsWith('tcp://') ? openTcp(port, timeoutMs) : openSerial(port, baud);

async function openSerial(path: string, baud: number): Promise<DecoderStream> {
  const { SerialPort } = await import('serialport');
  const serial = new SerialPort({ path, baudRate: baud, autoOpen: false });
  await new Promise<void>((resolve, reject) => serial.open((err) => (err ? reject(classifyOpenError(err)) : resolve())));
  let closing = false;
  const endListeners: Array<(reason: string) => void> = [];
  serial.on('close', () => {
    if (!closing) for (const l of endListeners) l('the port closed (cable unplugged?)');
  });
  serial.on('error', (err: Error) => {
    if (!closing) for (const l of endListeners) l(err.message);
  });
  return {
    onData: (listener) => serial.on('data', (chunk: Buffer) => listener(chunk.toString('latin1'))),
    onEnd: (listener) => endListeners.push(listener),
    close: () =>
      new Promise<void>((resolve) => {
        closing = true;
        if (!serial.isOpen) return resolve();
        serial.close(() => resolve());
      }),
  };
}

function openTcp(url: string, timeoutMs: number): Promise<DecoderStream> {
  const match = /^tcp:\/\/(\[[^\]]+\]|[^:/]+):(\d{1,5})\/?$/.exec(url);
  if (!match) return Promise.reject(new OpenFailure('other', `"${url}" is not tcp://host:port`));
  const host = match[1]!.replace(/^\[|\]$/g, '');
  const port = Number(match[2]);
  return new Promise((resolve, reject) => {
    const socket = connect({ host, port });
    const timer = setTimeout(() => {
      socket.destroy();
      reject(new OpenFailure('timeout', `no answer from ${host}:${port} within ${timeoutMs} ms`));
    }, timeoutMs);
    socket.once('error', (err) => {
      clearTimeout(timer);
      reject(classifyOpenError(err));
    });
    socket.once('connect', () => {
      clearTimeout(timer);
      socket.removeAllListeners('error');
      let closing = false;
      const endListeners: Array<(reason: string) => void> = [];
      const ended = (reason: string) => {
        if (!closing) for (const l of endListeners) l(reason);
      };
      socket.on('error', (err) => ended(err.message));
      socket.on('end', () => ended('the network box closed the connection'));
      resolve({
        onData: (listener) => socket.on('data', (chunk) => listener(chunk.toString('latin1'))),
        onEnd: (listener) => endListeners.push(listener),
        close: () =>
          new Promise<void>((done) => {
            closing = true;
            socket.end(() => done());
            socket.destroy();
            done();
          }),
      });
    });
  });
}

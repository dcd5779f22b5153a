import { isAbsolute, resolve } from 'node:path';
import { flushSplitter, initialSplitter, OVERLONG_LINE, splitChunk, type SplitResult, type SplitterState } from '../protocol/lineSplitter.js';
import { ScenarioError } from '../sim/scenarioError.js';
import { describeLinkError } from './describeLinkError.js';
import type { DecoderLink, DecoderLinkOptions, LinkStatus, OpenTransport, Transport } from './linkTypes.js';
import { serialTransport } from './serialTransport.js';
import { simTransport } from './simTransport.js';
import { tcpTransport } from './tcpTransport.js';

export const DEFAULT_RECONNECT_MS = 1000;

/**
 * The link to one decoder: opens the port, splits the byte stream into lines, and when the port
 * fails or vanishes reports 'disconnected' with a plain reason and tries again every reconnectMs until
 * closed. It never throws: a pulled USB cable is a status, not a crash.
 */
export function createDecoderLink(options: DecoderLinkOptions): DecoderLink {
  const reconnectMs = options.reconnectMs ?? DEFAULT_RECONNECT_MS;
  const target = describeTarget(options.port);
  let open: OpenTransport;
  try {
    open = chooseTransport(options);
  } catch (err) {
    // A port string we cannot even interpret: report it, and keep reporting it, but never crash.
    const reason = (err as Error).message;
    open = () => Promise.reject(Object.assign(new Error(reason), { plain: true }));
  }

  let closed = false;
  let current: Transport | null = null;
  let retry: ReturnType<typeof setTimeout> | null = null;
  let splitter: SplitterState = initialSplitter();
  let last: LinkStatus | null = null;
  let connecting: Promise<void> | null = null;
  let attempts = 0;

  /** A callback that throws must not wedge the link; the error is handed on, or re-raised loudly. */
  const safely = (fn: () => void) => {
    try {
      fn();
    } catch (err) {
      if (options.onCallbackError) options.onCallbackError(err);
      else
        queueMicrotask(() => {
          throw err;
        });
    }
  };

  const report = (status: LinkStatus) => {
    if (last && last.state === status.state && last.reason === status.reason) return;
    last = status;
    safely(() => options.onStatus(status));
  };

  const deliver = ({ lines, overlongBefore }: SplitResult) => {
    if (overlongBefore.length > 0 && options.onOverlong) {
      for (const line of lines) safely(() => options.onLine(line));
      safely(() => options.onOverlong!(overlongBefore.length));
      return;
    }
    // In arrival order, a stand-in where each over-long line was.
    let o = 0;
    for (let i = 0; i <= lines.length; i++) {
      while (o < overlongBefore.length && overlongBefore[o] === i) {
        safely(() => options.onLine(OVERLONG_LINE));
        o++;
      }
      if (i < lines.length) safely(() => options.onLine(lines[i]!));
    }
  };

  // An unfinished line at a disconnect is passed on, to be dropped and counted, not silently lost.
  const flush = () => {
    const rest = flushSplitter(splitter);
    splitter = rest.state;
    deliver(rest);
  };

  const scheduleRetry = () => {
    if (closed || retry) return;
    retry = setTimeout(() => {
      retry = null;
      attempt();
    }, reconnectMs);
  };

  const goneDown = (reason: string) => {
    current = null;
    flush();
    report({ state: 'disconnected', reason });
    scheduleRetry();
  };

  const attempt = () => {
    if (closed) return;
    const attemptNo = ++attempts;
    const live = () => !closed && attemptNo === attempts;
    let adopted = false;
    let endedEarly: string | null = null;
    splitter = initialSplitter();
    connecting = (async () => {
      let transport: Transport;
      try {
        transport = await open({
          onData: (chunk) => {
            if (!live()) return;
            const r = splitChunk(splitter, chunk);
            splitter = r.state;
            deliver(r);
          },
          onEnd: (reason) => {
            if (!live()) return;
            // Ended before we even took it: handled as soon as we do, so it cannot look connected for ever.
            if (!adopted) endedEarly = reason;
            else goneDown(reason);
          },
        });
      } catch (err) {
        if (closed) return;
        const reason = (err as { plain?: boolean }).plain
          ? (err as Error).message
          : err instanceof ScenarioError
            ? `${target}: ${err.lines().join('; ')}`
            : describeLinkError(err, target);
        report({ state: 'disconnected', reason });
        scheduleRetry();
        return;
      }
      if (closed) {
        await transport.close().catch(() => {});
        return;
      }
      current = transport;
      adopted = true;
      report({ state: 'connected' });
      if (endedEarly !== null) goneDown(endedEarly);
    })().finally(() => {
      connecting = null;
    });
  };

  report({ state: 'connecting' });
  attempt();

  return {
    async close() {
      if (closed) return;
      closed = true;
      if (retry) clearTimeout(retry);
      retry = null;
      await connecting;
      const transport = current;
      current = null;
      if (transport) await transport.close().catch(() => {});
      flush();
      report({ state: 'disconnected', reason: 'link closed' });
    },
  };
}

function chooseTransport(options: DecoderLinkOptions): OpenTransport {
  const { port } = options;
  if (port.startsWith('tcp://')) {
    const match = /^tcp:\/\/(\[[0-9A-Fa-f:]+\]|[A-Za-z0-9.-]+):(\d{1,5})$/.exec(port);
    const portNumber = Number(match?.[2]);
    if (!match || portNumber < 1 || portNumber > 65535) throw new Error(`"${port}" is not tcp://HOST:PORT`);
    return tcpTransport(match[1]!.replace(/^\[|\]$/g, ''), portNumber);
  }
  if (port.startsWith('sim:')) {
    const file = port.slice(4);
    if (!file) throw new Error('"sim:" needs a scenario file, e.g. sim:demo.scenario.yaml');
    const path = isAbsolute(file) ? file : resolve(options.scenarioBaseDir ?? process.cwd(), file);
    return simTransport(path, options.simSpeed ?? 1);
  }
  return serialTransport(port, options.baud);
}

function describeTarget(port: string): string {
  return port.startsWith('sim:') ? `simulated decoder ${port.slice(4)}` : port;
}

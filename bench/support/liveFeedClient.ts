import { performance } from 'node:perf_hooks';
import { BenchError } from './benchError.js';

/**
 * A client that follows the board's live feed the way /static/board.js does: it keeps /events/stream
 * open, and on every `loops` or `alarms` event fetches what it shows (here GET /api/v1/loops, the API's
 * view of the same states). An event that arrives while a fetch is on its way asks for one more fetch
 * after it, as the board script does. No poll gap: the client fetches as soon as it is told.
 */
export interface LiveFeedClient {
  /** Arrival times of the stream's events, in order. */
  eventsAt: number[];
  fetches(): number;
  close(): Promise<void>;
}

export async function followLiveFeed(
  address: string,
  authorization: string,
  onLoops: (body: Array<{ id: string; state: string }>, seenAtMs: number) => void,
): Promise<LiveFeedClient> {
  const abort = new AbortController();
  const response = await fetch(`${address}/events/stream`, { headers: { authorization, accept: 'text/event-stream' }, signal: abort.signal });
  if (response.status !== 200 || !response.body) throw new BenchError('PW_BENCH_API', `GET /events/stream answered ${response.status}`);
  const eventsAt: number[] = [];
  let fetches = 0;
  let busy = false;
  let again = false;
  let failure: Error | null = null;

  const refresh = (): void => {
    if (busy) {
      again = true;
      return;
    }
    busy = true;
    void (async () => {
      try {
        const res = await fetch(`${address}/api/v1/loops`, { headers: { authorization } });
        if (res.status !== 200) throw new BenchError('PW_BENCH_API', `GET /api/v1/loops answered ${res.status}: ${await res.text()}`);
        const body = (await res.json()) as Array<{ id: string; state: string }>;
        fetches += 1;
        onLoops(body, performance.now());
      } catch (err) {
        if (!abort.signal.aborted) failure ??= err as Error;
      } finally {
        busy = false;
        if (again && !abort.signal.aborted) {
          again = false;
          refresh();
        }
      }
    })();
  };

  const reader = response.body.getReader();
  const text = new TextDecoder();
  const reading = (async () => {
    let buffer = '';
    try {
      for (;;) {
        const { done, value } = await reader.read();
        if (done) return;
        const at = performance.now();
        buffer += text.decode(value, { stream: true });
        let end: number;
        while ((end = buffer.indexOf('\n\n')) >= 0) {
          const block = buffer.slice(0, end);
          buffer = buffer.slice(end + 2);
          if (/^event: (loops|alarms)$/m.test(block)) {
            eventsAt.push(at);
            refresh();
          }
        }
      }
    } catch (err) {
      if (!abort.signal.aborted) failure ??= err as Error;
    }
  })();

  return {
    eventsAt,
    fetches: () => fetches,
    async close() {
      abort.abort();
      await reading;
      if (failure) throw failure;
    },
  };
}

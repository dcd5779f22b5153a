/** A hand-driven clock and timer queue for the real-time shells: tests move time, nothing sleeps. */
export function createFakeClock(startMs = 1000) {
  let nowMs = startMs;
  let timers: Array<{ atMs: number; fn: () => void; id: number }> = [];
  let nextId = 0;
  return {
    now: () => nowMs,
    setTimer(fn: () => void, ms: number) {
      const id = nextId++;
      timers.push({ atMs: nowMs + ms, fn, id });
      return () => {
        timers = timers.filter((t) => t.id !== id);
      };
    },
    /** Moves time forward, firing due timers in order (timers they set fire too, if due). */
    advance(ms: number) {
      const until = nowMs + ms;
      for (;;) {
        timers.sort((a, b) => a.atMs - b.atMs || a.id - b.id);
        const due = timers[0];
        if (!due || due.atMs > until) break;
        timers.shift();
        nowMs = due.atMs;
        due.fn();
      }
      nowMs = until;
    },
    get pending() {
      return timers.length;
    },
  };
}

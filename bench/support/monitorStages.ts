import { PerformanceObserver, performance } from 'node:perf_hooks';
import type { Monitor } from '../../src/daemon/startMonitor.js';

/**
 * Where the monitor's own share goes, seen from outside: the core's entry points and the durable
 * writer's commit are wrapped (bench only, the monitor is not changed for it). Every call into the core
 * runs to its end on this thread — site step, alarm engine, edge flush, the state transaction with its
 * fsync, the live-feed publish — so when the call returns, the state is on disk and in memory, and the
 * read model's version has moved on (the next GET /api/v1/loops builds its body afresh).
 */
export interface CoreCall {
  via: 'line' | 'clock';
  line: string | null;
  startMs: number;
  /** The 'state' transaction (state changes, alarms, queued notices), or null when the call made none. */
  stateCommitStartMs: number | null;
  stateCommitEndMs: number | null;
  /** Time in droppable edge transactions during the call (flushed just before a state change). */
  edgesMs: number;
  doneMs: number;
  /**
   * Process CPU time (process.cpuUsage: getrusage, all threads, so GC helpers count too) in the state
   * transaction and in the whole call. Unlike the wall clock it leaves out time spent waiting for a CPU.
   */
  stateCommitCpuMs: number | null;
  /** Of that, the rows written inside the transaction (the rest is BEGIN, COMMIT with its fsync, the file guard). */
  stateWorkCpuMs: number | null;
  callCpuMs: number;
  /** Garbage-collection pauses that overlapped the call (filled in by gcWithin, after the run). */
  gcMs: number;
}

export interface CommittedState {
  loopId: string;
  state: string;
  call: CoreCall;
}

export interface MonitorStages {
  /** When the core's line handler received each line: the start of the monitor's own share. */
  readAt: Map<string, number>;
  /** Every loop state the core committed, in order, with the call that committed it. */
  committed: CommittedState[];
  /** Stops the GC observer and the CPU clock; sets each committing call's gcMs. */
  finish(): void;
}

export function traceMonitorStages(monitor: Monitor, loopIds: readonly string[]): MonitorStages {
  const core = monitor.core;
  const writer = monitor.writer;
  const readAt = new Map<string, number>();
  const committed: CommittedState[] = [];
  const lastState = new Map(loopIds.map((id) => [id, core.loopLive(id)?.state ?? 'unknown']));
  let current: CoreCall | null = null;
  const cpuMs = () => {
    const used = process.cpuUsage();
    return (used.user + used.system) / 1000;
  };
  const gcPauses: Array<{ startMs: number; endMs: number }> = [];
  const gcObserver = new PerformanceObserver((list) => {
    for (const entry of list.getEntries()) gcPauses.push({ startMs: entry.startTime, endMs: entry.startTime + entry.duration });
  });
  gcObserver.observe({ entryTypes: ['gc'] });

  const commit = writer.commit.bind(writer);
  writer.commit = (label, work, options) => {
    const startMs = performance.now();
    const cpu = cpuMs();
    let workCpu = 0;
    const timedWork: typeof work = (store) => {
      const a = cpuMs();
      try {
        work(store);
      } finally {
        const b = cpuMs();
        workCpu += b - a;
      }
    };
    const outcome = commit(label, timedWork, options);
    const endMs = performance.now();
    const cpuEnd = cpuMs();
    if (current !== null) {
      if (label === 'state') {
        current.stateCommitStartMs ??= startMs;
        current.stateCommitEndMs = endMs;
        current.stateCommitCpuMs = (current.stateCommitCpuMs ?? 0) + cpuEnd - cpu;
        current.stateWorkCpuMs = (current.stateWorkCpuMs ?? 0) + workCpu;
      } else if (label === 'edges') current.edgesMs += endMs - startMs;
    }
    return outcome;
  };

  const traced = (via: CoreCall['via'], line: string | null, run: () => void): void => {
    // A call from inside another one (none today) is part of the outer call.
    if (current !== null) return run();
    const cpu = cpuMs();
    const call: CoreCall = { via, line, startMs: performance.now(), stateCommitStartMs: null, stateCommitEndMs: null, edgesMs: 0, doneMs: 0, stateCommitCpuMs: null, stateWorkCpuMs: null, callCpuMs: 0, gcMs: 0 };
    current = call;
    try {
      run();
    } finally {
      call.doneMs = performance.now();
      const cpuEnd = cpuMs();
      call.callCpuMs = cpuEnd - cpu;
      current = null;
    }
    // Only a call that ran a state transaction can have changed a loop's state.
    if (call.stateCommitStartMs === null) return;
    for (const loopId of loopIds) {
      const state = core.loopLive(loopId)?.state ?? 'unknown';
      if (state === lastState.get(loopId)) continue;
      lastState.set(loopId, state);
      committed.push({ loopId, state, call });
    }
  };

  const line = core.line.bind(core);
  core.line = (decoderId, text, nowMs) => {
    readAt.set(text, performance.now());
    traced('line', text, () => line(decoderId, text, nowMs));
  };
  const tick = core.tick.bind(core);
  core.tick = (nowMs) => traced('clock', null, () => tick(nowMs));
  const handle = core.handle.bind(core);
  core.handle = (input, nowMs) => traced(input.kind === 'line' ? 'line' : 'clock', null, () => handle(input, nowMs));
  return {
    readAt,
    committed,
    finish() {
      gcObserver.disconnect();
      for (const { call } of committed) {
        call.gcMs = 0;
        for (const gc of gcPauses) call.gcMs += Math.max(0, Math.min(gc.endMs, call.doneMs) - Math.max(gc.startMs, call.startMs));
      }
    },
  };
}

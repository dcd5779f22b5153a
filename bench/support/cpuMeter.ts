import { performance } from 'node:perf_hooks';

/**
 * CPU time of this process (user + system, from `process.cpuUsage`) and wall time around one measured
 * section. On a shared machine wall time moves with other people's load; CPU time per unit of work
 * moves much less, so the benches quote it beside throughput.
 */
export interface CpuSpan {
  cpuS: number;
  wallS: number;
}

export function startCpuSpan(): () => CpuSpan {
  const cpu0 = process.cpuUsage();
  const wall0 = performance.now();
  return () => {
    const cpu = process.cpuUsage(cpu0);
    return { cpuS: (cpu.user + cpu.system) / 1e6, wallS: (performance.now() - wall0) / 1000 };
  };
}

/** Runs `work` synchronously and returns its CPU and wall time. */
export function measureCpu(work: () => void): CpuSpan {
  const stop = startCpuSpan();
  work();
  return stop();
}

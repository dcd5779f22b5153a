import { availableParallelism, cpus, platform, release, totalmem } from 'node:os';

export interface MachineInfo {
  cores: number;
  cpuModel: string;
  node: string;
  os: string;
  memoryGb: number;
}

export function describeMachine(): MachineInfo {
  return {
    cores: availableParallelism(),
    cpuModel: cpus()[0]?.model.trim() ?? 'unknown CPU',
    node: process.version,
    os: `${platform()} ${release()}`,
    memoryGb: Math.round((totalmem() / 2 ** 30) * 10) / 10,
  };
}

export function machineLine(m: MachineInfo): string {
  return `${m.cores} cores, ${m.cpuModel}, ${m.memoryGb} GB RAM, Node ${m.node}, ${m.os}`;
}

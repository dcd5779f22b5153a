import type { LoopView } from '../webPorts.js';
import type { BoardState } from './stateWords.js';

/** Board groups, most urgent first: alarms, then trouble, then loops nobody is watching, then healthy. */
export const BOARD_GROUPS = ['alarm', 'trouble', 'out-of-service', 'healthy'] as const;
export type BoardGroup = (typeof BOARD_GROUPS)[number];

export function boardState(loop: LoopView): BoardState {
  return loop.inService ? loop.state : 'out-of-service';
}

export function boardGroup(loop: LoopView): BoardGroup {
  if (!loop.inService) return 'out-of-service';
  if (loop.state === 'tripped' || loop.alarm?.priority === 'alarm') return 'alarm';
  if (loop.state !== 'healthy' || loop.alarm !== null || loop.intermittent) return 'trouble';
  return 'healthy';
}

/** Within a group, the longest-standing problem first; healthy loops by name so they stay put. */
export function orderBoard(loops: readonly LoopView[]): Array<{ group: BoardGroup; loops: LoopView[] }> {
  return BOARD_GROUPS.map((group) => {
    const members = loops.filter((loop) => boardGroup(loop) === group);
    members.sort((a, b) =>
      group === 'healthy' || group === 'out-of-service' ? a.name.localeCompare(b.name) || a.id.localeCompare(b.id) : a.sinceMs - b.sinceMs || a.name.localeCompare(b.name),
    );
    return { group, loops: members };
  }).filter((entry) => entry.loops.length > 0);
}

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

/** Nobody has acknowledged it yet: these come first within their group. */
function awaitsSomeone(loop: LoopView): boolean {
  return loop.alarm?.state === 'unacknowledged' || loop.alarm?.state === 'returned-unacknowledged';
}

/**
 * Within alarm and trouble: what nobody has acknowledged first, then the longest-standing problem.
 * Healthy and out-of-service loops by name, so they stay where people expect them.
 */
export function orderBoard(loops: readonly LoopView[]): Array<{ group: BoardGroup; loops: LoopView[] }> {
  return BOARD_GROUPS.map((group) => {
    const members = loops.filter((loop) => boardGroup(loop) === group);
    const byName = (a: LoopView, b: LoopView) => a.name.localeCompare(b.name) || a.id.localeCompare(b.id);
    members.sort((a, b) =>
      group === 'healthy' || group === 'out-of-service'
        ? byName(a, b)
        : Number(awaitsSomeone(b)) - Number(awaitsSomeone(a)) || a.sinceMs - b.sinceMs || byName(a, b),
    );
    return { group, loops: members };
  }).filter((entry) => entry.loops.length > 0);
}

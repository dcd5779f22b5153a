import type { LoopConfig } from '../config/schema.js';
import type { Condition } from '../model/condition.js';
import { CONDITION_PRIORITY } from '../model/condition.js';
import { DEFAULT_POLICY_NAME } from './escalationPolicy.js';

export interface RaiseSettings {
  latched: boolean;
  policy: string;
}

/**
 * Latching and escalation policy for a condition, from the loop's settings: alarms use `latch_alarms`
 * and `escalation`; trouble uses `latch_trouble` and `trouble_escalation` (falling back to the loop's
 * `escalation`). Conditions with no loop (decoder or system trouble) do not latch and use `default`.
 */
export function raiseSettingsFor(loop: LoopConfig | null, condition: Condition): RaiseSettings {
  const priority = CONDITION_PRIORITY[condition];
  if (loop === null) return { latched: false, policy: DEFAULT_POLICY_NAME };
  if (priority === 'alarm') return { latched: loop.latch_alarms, policy: loop.escalation ?? DEFAULT_POLICY_NAME };
  return { latched: loop.latch_trouble, policy: loop.trouble_escalation ?? loop.escalation ?? DEFAULT_POLICY_NAME };
}

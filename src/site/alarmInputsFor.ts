import type { AlarmInput } from '../alarms/alarmInput.js';
import { raiseSettingsFor } from '../alarms/raiseSettings.js';
import type { LoopConfig, SiteConfig } from '../config/schema.js';
import { CONDITION_PRIORITY, type Condition } from '../model/condition.js';
import { FAULT_LOOP_STATES, isFaultState } from '../model/loopState.js';
import type { SiteEffect } from './siteTypes.js';

/**
 * Maps what the site step saw to alarm-engine inputs (pure). A loop's fault state becomes a condition
 * on that loop; a decoder going silent is one `offline` condition on the decoder, not one per loop;
 * while a loop is flagged intermittent its trouble flaps are not raised one by one.
 */
export type LoopsById = ReadonlyMap<string, LoopConfig>;

export function loopsById(config: SiteConfig): LoopsById {
  return new Map(config.loops.map((loop) => [loop.id, loop]));
}

export function raiseFor(loops: LoopsById, source: string, loopId: string | null, condition: Condition): AlarmInput {
  const settings = raiseSettingsFor(loopId ? (loops.get(loopId) ?? null) : null, condition);
  return { kind: 'raise', source, loopId, condition, latched: settings.latched, policy: settings.policy };
}

export function alarmInputsFor(loops: LoopsById, effect: SiteEffect, intermittentLoops: ReadonlySet<string>): AlarmInput[] {
  switch (effect.kind) {
    case 'decoder-offline':
      return [raiseFor(loops, effect.decoderId, null, 'offline')];
    case 'decoder-online':
      return [{ kind: 'clear', source: effect.decoderId, condition: 'offline' }];
    case 'decoder':
      return effect.event.kind === 'fault' ? [raiseFor(loops, effect.decoderId, null, 'decoder-fault')] : [];
    case 'decoder-clock':
    case 'decoder-mass-trip':
      return [raiseFor(loops, effect.decoderId, null, 'decoder-fault')];
    case 'edge':
      return [];
    // Stryker disable next-line ConditionalExpression,StringLiteral: without the case a loop effect leaves the switch all the same, to the code below
    case 'loop':
      break;
  }
  const { loopId } = effect;
  const loopEffect = effect.effect;
  if (loopEffect.kind === 'intermittent') {
    return loopEffect.on
      ? [raiseFor(loops, loopId, loopId, 'intermittent')]
      : [{ kind: 'clear', source: loopId, condition: 'intermittent' }];
  }
  // Stryker disable next-line ConditionalExpression: a pulse has no from/to, so the code below gives no input for it either
  if (loopEffect.kind !== 'state') return [];
  const inputs: AlarmInput[] = [];
  if (loopEffect.to === 'healthy') {
    // Healthy proves every fault condition on the loop is over, including ones raised before a
    // restart of the monitor or the decoder (when the state in between was `unknown`).
    for (const condition of FAULT_LOOP_STATES) inputs.push({ kind: 'clear', source: loopId, condition });
  } else if (isFaultState(loopEffect.from) && isFaultState(loopEffect.to)) {
    // One fault became another (open → tripped). Going `offline` or `unknown` clears nothing: the
    // loop is blind then, not better.
    inputs.push({ kind: 'clear', source: loopId, condition: loopEffect.from });
  }
  if (isFaultState(loopEffect.to)) {
    const condition: Condition = loopEffect.to;
    const flapping = intermittentLoops.has(loopId) && CONDITION_PRIORITY[condition] !== 'alarm';
    if (!flapping) inputs.push(raiseFor(loops, loopId, loopId, condition));
  }
  return inputs;
}

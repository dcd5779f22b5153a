import type { SiteConfig } from '../config/schema.js';

/** One tier of an escalation policy: `afterMs` after the alarm was raised, tell `contactIds`. */
export interface EscalationStep {
  afterMs: number;
  contactIds: string[];
}

/**
 * An escalation policy as the planner uses it. Steps are in order of `afterMs`. Repeats fall on the
 * raise time plus whole multiples of `repeatEveryMs` and go to everyone notified so far;
 * `repeatEveryMs: null` means no repeats.
 */
export interface EscalationPolicy {
  name: string;
  steps: EscalationStep[];
  repeatEveryMs: number | null;
  maxRepeats: number;
}

/** The policy every loop uses unless it names another one. */
export const DEFAULT_POLICY_NAME = 'default';

/**
 * Built-in fallback when a site names no `default` policy: every configured contact is told at once,
 * then reminded every 30 minutes, at most 10 times (5 hours of reminders). Our own choice, picked so
 * a site with contacts but no escalation section still reaches somebody. With no contacts at all it
 * notifies nobody; alarms still show on the board.
 */
export const FALLBACK_REPEAT_EVERY_MS = 30 * 60_000;
export const FALLBACK_MAX_REPEATS = 10;

export function fallbackPolicy(contactIds: readonly string[]): EscalationPolicy {
  return {
    name: DEFAULT_POLICY_NAME,
    steps: [{ afterMs: 0, contactIds: [...contactIds] }],
    repeatEveryMs: FALLBACK_REPEAT_EVERY_MS,
    maxRepeats: FALLBACK_MAX_REPEATS,
  };
}

/** Every policy the config names, plus the fallback under `default` when the site gives none. */
export function policiesFromConfig(config: Pick<SiteConfig, 'escalation' | 'contacts'>): Record<string, EscalationPolicy> {
  const policies: Record<string, EscalationPolicy> = {};
  for (const [name, policy] of Object.entries(config.escalation)) {
    policies[name] = {
      name,
      // The config check already demands ascending steps; sorting (stable) keeps the planner safe regardless.
      steps: policy.steps
        .map((step) => ({ afterMs: step.after, contactIds: [...new Set(step.notify)] }))
        .sort((a, b) => a.afterMs - b.afterMs),
      // A zero interval would mean "repeat continuously"; treat it as no repeats rather than a mail flood.
      // Stryker disable next-line ConditionalExpression: undefined > 0 is false, so the undefined check alone decides nothing
      repeatEveryMs: policy.repeat_every !== undefined && policy.repeat_every > 0 ? policy.repeat_every : null,
      maxRepeats: policy.max_repeats,
    };
  }
  if (!(DEFAULT_POLICY_NAME in policies)) {
    policies[DEFAULT_POLICY_NAME] = fallbackPolicy(config.contacts.map((contact) => contact.id));
  }
  return policies;
}

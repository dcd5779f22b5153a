import type { ConfigProblem } from './configError.js';
import type { ContactConfig, DecoderConfig, EscalationPolicyConfig, LoopConfig, MailConfig, SiteConfig } from './schema.js';

/**
 * What the cross-checks look at. When the file's shape passed, every entry is there. When it did
 * not, this holds whatever did parse — each list entry in its own place, `undefined` where it failed
 * its own checks — so duplicate ids, inputs claimed twice and unknown references are reported in the
 * same run as the shape problems. `writtenIds` are the ids written in entries that failed: a
 * reference to one of those is not also reported as unknown.
 */
export interface CrossCheckInput {
  decoders: readonly (DecoderConfig | undefined)[];
  loops: readonly (LoopConfig | undefined)[];
  contacts: readonly (ContactConfig | undefined)[];
  /** Policy names written in the file, each with its parsed policy or `undefined` when it failed. */
  escalation: Readonly<Record<string, EscalationPolicyConfig | undefined>>;
  reportNotify: readonly string[];
  mail: MailConfig | undefined;
  writtenIds: { decoders: ReadonlySet<string>; contacts: ReadonlySet<string>; loopDecoders: ReadonlySet<string> };
}

const NONE: ReadonlySet<string> = new Set();

export function crossCheckInputOf(config: SiteConfig): CrossCheckInput {
  return {
    decoders: config.decoders,
    loops: config.loops,
    contacts: config.contacts,
    escalation: config.escalation,
    reportNotify: config.report.notify,
    mail: config.mail,
    writtenIds: { decoders: NONE, contacts: NONE, loopDecoders: NONE },
  };
}

/** Checks that need the whole file: ids unique, references resolve, inputs fit their decoder. */
export function crossCheck(input: CrossCheckInput | SiteConfig): ConfigProblem[] {
  const config = 'writtenIds' in input ? input : crossCheckInputOf(input);
  const problems: ConfigProblem[] = [];
  const add = (path: string, message: string) => problems.push({ path, message });

  const firstIndex = <T extends { id: string }>(items: readonly (T | undefined)[], section: string) => {
    const seen = new Map<string, number>();
    items.forEach((item, i) => {
      if (!item) return;
      const earlier = seen.get(item.id);
      if (earlier !== undefined) add(`${section}[${i}].id`, `"${item.id}" is already used by ${section}[${earlier}]`);
      else seen.set(item.id, i);
    });
    return seen;
  };
  const decoders = firstIndex(config.decoders, 'decoders');
  firstIndex(config.loops, 'loops');
  const contacts = firstIndex(config.contacts, 'contacts');
  const knownContact = (id: string) => contacts.has(id) || config.writtenIds.contacts.has(id);

  const claimed = new Map<string, number>();
  config.loops.forEach((loop, i) => {
    if (!loop) return;
    const decoderIndex = decoders.get(loop.decoder);
    if (decoderIndex === undefined) {
      if (!config.writtenIds.decoders.has(loop.decoder)) add(`loops[${i}].decoder`, `no decoder has id "${loop.decoder}"`);
    } else {
      const decoder = config.decoders[decoderIndex]!;
      if (decoder.inputs !== undefined && loop.input > decoder.inputs) {
        add(`loops[${i}].input`, `${loop.input} is past decoder "${decoder.id}"'s ${decoder.inputs} inputs`);
      }
    }
    const key = `${loop.decoder}#${loop.input}`;
    const owner = claimed.get(key);
    if (owner !== undefined) {
      add(`loops[${i}].input`, `input ${loop.input} of decoder "${loop.decoder}" is already claimed by loops[${owner}] ("${config.loops[owner]!.id}")`);
    } else claimed.set(key, i);
    if (loop.pulse_min_ms >= loop.pulse_max_ms) add(`loops[${i}].pulse_min_ms`, `must be below pulse_max_ms (${loop.pulse_max_ms})`);
    if (loop.pulse_max_ms >= loop.short_ms) add(`loops[${i}].pulse_max_ms`, `must be below short_ms (${loop.short_ms})`);
    if (loop.interval_min_ratio >= loop.interval_max_ratio) add(`loops[${i}].interval_min_ratio`, `must be below interval_max_ratio (${loop.interval_max_ratio})`);
    const tripMs = loop.trip_ms ?? loop.period_ms * 3;
    if (tripMs <= loop.period_ms * loop.interval_max_ratio) add(`loops[${i}].trip_ms`, `${tripMs} must be longer than the longest accepted pulse interval (${loop.period_ms * loop.interval_max_ratio} ms)`);
    for (const policyKey of ['escalation', 'trouble_escalation'] as const) {
      const name = loop[policyKey];
      if (name !== undefined && !(name in config.escalation)) add(`loops[${i}].${policyKey}`, `no escalation policy is named "${name}"`);
    }
  });

  // With no loop list at all the shape check has said so already.
  if (config.loops.length > 0) config.decoders.forEach((decoder, i) => {
    if (!decoder) return;
    const used = config.loops.some((loop) => loop?.decoder === decoder.id) || config.writtenIds.loopDecoders.has(decoder.id);
    if (!used) add(`decoders[${i}]`, `decoder "${decoder.id}" has no loops`);
  });

  for (const [name, policy] of Object.entries(config.escalation)) {
    if (!policy) continue;
    policy.steps.forEach((step, s) => {
      step.notify.forEach((contactId, c) => {
        if (!knownContact(contactId)) add(`escalation.${name}.steps[${s}].notify[${c}]`, `no contact has id "${contactId}"`);
      });
      const previous = policy.steps[s - 1];
      if (previous && step.after < previous.after) add(`escalation.${name}.steps[${s}].after`, 'steps must be in order of time');
    });
  }
  config.reportNotify.forEach((contactId, c) => {
    if (!knownContact(contactId)) add(`report.notify[${c}]`, `no contact has id "${contactId}"`);
  });
  const mail = config.mail;
  if (mail?.smtp?.pass !== undefined && mail.smtp.pass_env !== undefined) add('mail.smtp.pass', 'give either pass or pass_env, not both');
  if (mail && mail.retry_first > mail.retry_max) add('mail.retry_first', `must not be longer than retry_max (${mail.retry_max} ms)`);
  return problems;
}

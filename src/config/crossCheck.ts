import type { ConfigProblem } from './configError.js';
import type { SiteConfig } from './schema.js';

/** Checks that need the whole file: ids unique, references resolve, inputs fit their decoder. */
export function crossCheck(config: SiteConfig): ConfigProblem[] {
  const problems: ConfigProblem[] = [];
  const add = (path: string, message: string) => problems.push({ path, message });

  const firstIndex = <T extends { id: string }>(items: readonly T[], section: string) => {
    const seen = new Map<string, number>();
    items.forEach((item, i) => {
      const earlier = seen.get(item.id);
      if (earlier !== undefined) add(`${section}[${i}].id`, `"${item.id}" is already used by ${section}[${earlier}]`);
      else seen.set(item.id, i);
    });
    return seen;
  };
  const decoders = firstIndex(config.decoders, 'decoders');
  firstIndex(config.loops, 'loops');
  const contacts = firstIndex(config.contacts, 'contacts');

  const claimed = new Map<string, number>();
  config.loops.forEach((loop, i) => {
    const decoderIndex = decoders.get(loop.decoder);
    if (decoderIndex === undefined) {
      add(`loops[${i}].decoder`, `no decoder has id "${loop.decoder}"`);
    } else {
      const decoder = config.decoders[decoderIndex]!;
      if (decoder.inputs !== undefined && loop.input > decoder.inputs) {
        add(`loops[${i}].input`, `${loop.input} is past decoder "${decoder.id}"'s ${decoder.inputs} inputs`);
      }
      const key = `${loop.decoder}#${loop.input}`;
      const owner = claimed.get(key);
      if (owner !== undefined) {
        add(`loops[${i}].input`, `input ${loop.input} of decoder "${loop.decoder}" is already claimed by loops[${owner}] ("${config.loops[owner]!.id}")`);
      } else claimed.set(key, i);
    }
    if (loop.pulse_min_ms >= loop.pulse_max_ms) add(`loops[${i}].pulse_min_ms`, `must be below pulse_max_ms (${loop.pulse_max_ms})`);
    if (loop.pulse_max_ms >= loop.short_ms) add(`loops[${i}].pulse_max_ms`, `must be below short_ms (${loop.short_ms})`);
    if (loop.interval_min_ratio >= loop.interval_max_ratio) add(`loops[${i}].interval_min_ratio`, `must be below interval_max_ratio (${loop.interval_max_ratio})`);
    const tripMs = loop.trip_ms ?? loop.period_ms * 3;
    if (tripMs <= loop.period_ms * loop.interval_max_ratio) add(`loops[${i}].trip_ms`, `${tripMs} must be longer than the longest accepted pulse interval (${loop.period_ms * loop.interval_max_ratio} ms)`);
    for (const key of ['escalation', 'trouble_escalation'] as const) {
      const name = loop[key];
      if (name !== undefined && !(name in config.escalation)) add(`loops[${i}].${key}`, `no escalation policy is named "${name}"`);
    }
  });

  config.decoders.forEach((decoder, i) => {
    if (!config.loops.some((loop) => loop.decoder === decoder.id)) add(`decoders[${i}]`, `decoder "${decoder.id}" has no loops`);
  });

  for (const [name, policy] of Object.entries(config.escalation)) {
    policy.steps.forEach((step, s) => {
      step.notify.forEach((contactId, c) => {
        if (!contacts.has(contactId)) add(`escalation.${name}.steps[${s}].notify[${c}]`, `no contact has id "${contactId}"`);
      });
      const previous = policy.steps[s - 1];
      if (previous && step.after < previous.after) add(`escalation.${name}.steps[${s}].after`, 'steps must be in order of time');
    });
  }
  config.report.notify.forEach((contactId, c) => {
    if (!contacts.has(contactId)) add(`report.notify[${c}]`, `no contact has id "${contactId}"`);
  });
  const smtp = config.mail.smtp;
  if (smtp?.pass !== undefined && smtp.pass_env !== undefined) add('mail.smtp.pass', 'give either pass or pass_env, not both');
  return problems;
}

import { readFileSync } from 'node:fs';
import { ConfigError } from './configError.js';
import { crossCheck, type CrossCheckInput } from './crossCheck.js';
import { describeIssues, plainIssueMessage } from './plainIssues.js';
import { readYamlMapping } from './readYaml.js';
import { sectionSchemas, siteConfigSchema, type SiteConfig } from './schema.js';

export { describeIssues } from './plainIssues.js';

const asList = (value: unknown): unknown[] => (Array.isArray(value) ? value : []);
const asMapping = (value: unknown): Record<string, unknown> =>
  value !== null && typeof value === 'object' && !Array.isArray(value) ? (value as Record<string, unknown>) : {};

function parsedOrUndefined<T>(schema: { safeParse(value: unknown): { success: true; data: T } | { success: false } }, value: unknown): T | undefined {
  const result = schema.safeParse(value);
  return result.success ? result.data : undefined;
}

/** Strings written under `key` in entries that did not parse, so references to them still resolve. */
function writtenStrings(entries: unknown[], parsed: readonly unknown[], key: string): Set<string> {
  const out = new Set<string>();
  entries.forEach((entry, i) => {
    const value = asMapping(entry)[key];
    if (parsed[i] === undefined && typeof value === 'string') out.add(value);
  });
  return out;
}

/** Whatever parsed of a file whose whole shape did not, entry by entry, for the cross-checks. */
function salvage(raw: Record<string, unknown>): CrossCheckInput {
  const rawDecoders = asList(raw.decoders);
  const rawLoops = asList(raw.loops);
  const rawContacts = asList(raw.contacts);
  const decoders = rawDecoders.map((d) => parsedOrUndefined(sectionSchemas.decoder, d));
  const loops = rawLoops.map((l) => parsedOrUndefined(sectionSchemas.loop, l));
  const contacts = rawContacts.map((c) => parsedOrUndefined(sectionSchemas.contact, c));
  const escalation = Object.fromEntries(Object.entries(asMapping(raw.escalation)).map(([name, p]) => [name, parsedOrUndefined(sectionSchemas.policy, p)]));
  const report = parsedOrUndefined(sectionSchemas.report, raw.report);
  return {
    decoders,
    loops,
    contacts,
    escalation,
    reportNotify: report?.notify ?? [],
    mail: parsedOrUndefined(sectionSchemas.mail, raw.mail),
    writtenIds: {
      decoders: writtenStrings(rawDecoders, decoders, 'id'),
      contacts: writtenStrings(rawContacts, contacts, 'id'),
      loopDecoders: writtenStrings(rawLoops, loops, 'decoder'),
    },
  };
}

/**
 * Parses YAML text into a validated config; throws ConfigError listing every problem: the shape
 * problems and the cross-reference problems of whatever did parse, in one run.
 */
export function parseConfig(text: string, file = '<config>'): SiteConfig {
  const read = readYamlMapping(text, 'keys such as site:, decoders:, loops:');
  if (!read.ok) throw new ConfigError(file, read.problems);
  const result = siteConfigSchema.safeParse(read.value, { error: plainIssueMessage });
  if (!result.success) {
    const shape = describeIssues(result.error.issues, read.value);
    const seen = new Set(shape.map((p) => p.path));
    const references = crossCheck(salvage(read.value)).filter((p) => !seen.has(p.path));
    throw new ConfigError(file, [...shape, ...references]);
  }
  const problems = crossCheck(result.data);
  if (problems.length > 0) throw new ConfigError(file, problems);
  return result.data;
}

/** Reads and validates a config file. Unreadable files become a ConfigError too, never a raw fs error. */
export function loadConfig(file: string): SiteConfig {
  let text: string;
  try {
    text = readFileSync(file, 'utf8');
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code;
    const reason = code === 'ENOENT' ? 'file not found' : code === 'EACCES' ? 'permission denied' : String((err as Error).message);
    throw new ConfigError(file, [{ path: '', message: `cannot read the config file: ${reason}` }]);
  }
  return parseConfig(text, file);
}

import { readFileSync } from 'node:fs';
import { parseDocument } from 'yaml';
import type { z } from 'zod';
import { ConfigError, formatPath, type ConfigProblem } from './configError.js';
import { crossCheck } from './crossCheck.js';
import { siteConfigSchema, type SiteConfig } from './schema.js';

/** Turns zod issues into one plain line each, naming the field. */
export function describeIssues(issues: readonly z.core.$ZodIssue[]): ConfigProblem[] {
  const problems: ConfigProblem[] = [];
  for (const issue of issues) {
    const path = formatPath(issue.path);
    if (issue.code === 'unrecognized_keys') {
      for (const key of issue.keys) {
        problems.push({ path: path ? `${path}.${key}` : key, message: 'unknown key' });
      }
    } else if (issue.code === 'invalid_type' && issue.input === undefined) {
      problems.push({ path, message: 'is required' });
    } else {
      problems.push({ path, message: issue.message });
    }
  }
  return problems;
}

/** Parses YAML text into a validated config; throws ConfigError listing every problem. */
export function parseConfig(text: string, file = '<config>'): SiteConfig {
  // No YAML 1.1 extras (!!binary, !!set, timestamps): a site config is plain mappings, lists, text and numbers.
  const doc = parseDocument(text, { prettyErrors: true, uniqueKeys: true, resolveKnownTags: false });
  const yamlProblems = [...doc.errors, ...doc.warnings.filter((w) => w.code === 'TAG_RESOLVE_FAILED')];
  if (yamlProblems.length > 0) {
    throw new ConfigError(
      file,
      yamlProblems.map((e) => ({
        path: e.linePos?.[0] ? `line ${e.linePos[0].line}, column ${e.linePos[0].col}` : '',
        message: `YAML: ${e.message.split('\n')[0]!.replace(/ at line \d+, column \d+:?$/, '')}`,
      })),
    );
  }
  let raw: unknown;
  try {
    // A small alias budget: an "alias bomb" is refused instead of exhausting memory.
    raw = doc.toJS({ maxAliasCount: 200 });
  } catch (err) {
    throw new ConfigError(file, [{ path: '', message: `YAML: ${(err as Error).message.split('\n')[0]} — check the file's anchors (&name) and aliases (*name)` }]);
  }
  if (raw === null || typeof raw !== 'object' || Array.isArray(raw)) {
    throw new ConfigError(file, [{ path: '', message: 'the file must be a YAML mapping (keys such as site:, decoders:, loops:)' }]);
  }
  const result = siteConfigSchema.safeParse(raw);
  if (!result.success) throw new ConfigError(file, describeIssues(result.error.issues));
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

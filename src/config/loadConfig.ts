import { readFileSync } from 'node:fs';
import type { z } from 'zod';
import { ConfigError, formatPath, type ConfigProblem } from './configError.js';
import { crossCheck } from './crossCheck.js';
import { readYamlMapping } from './readYaml.js';
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
  const read = readYamlMapping(text, 'keys such as site:, decoders:, loops:');
  if (!read.ok) throw new ConfigError(file, read.problems);
  const result = siteConfigSchema.safeParse(read.value);
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

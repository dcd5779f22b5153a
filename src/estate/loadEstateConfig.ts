import { readFileSync } from 'node:fs';
import { ConfigError, type ConfigProblem } from '../config/configError.js';
import { describeIssues } from '../config/loadConfig.js';
import { readYamlMapping } from '../config/readYaml.js';
import { estateConfigSchema, type EstateConfig } from './estateConfigSchema.js';

/** Ids unique, contacts named in escalation exist: the estate's share of the site's cross-checks. */
function crossCheckEstate(config: EstateConfig): ConfigProblem[] {
  const problems: ConfigProblem[] = [];
  const seen = new Map<string, number>();
  config.sites.forEach((s, i) => {
    const earlier = seen.get(s.id);
    if (earlier !== undefined) problems.push({ path: `sites[${i}].id`, message: `"${s.id}" is already used by sites[${earlier}]` });
    else seen.set(s.id, i);
  });
  const contacts = new Set(config.contacts.map((c) => c.id));
  for (const [name, policy] of Object.entries(config.escalation)) {
    policy.steps.forEach((step, i) => {
      step.notify.forEach((contact, j) => {
        if (!contacts.has(contact)) problems.push({ path: `escalation.${name}.steps[${i}].notify[${j}]`, message: `no contact has id "${contact}"` });
      });
    });
  }
  return problems;
}

export function parseEstateConfig(text: string, file = '<estate config>'): EstateConfig {
  const read = readYamlMapping(text, 'keys such as estate:, mqtt:, sites:');
  if (!read.ok) throw new ConfigError(file, read.problems);
  const result = estateConfigSchema.safeParse(read.value);
  if (!result.success) throw new ConfigError(file, describeIssues(result.error.issues, read.value));
  const problems = crossCheckEstate(result.data);
  if (problems.length > 0) throw new ConfigError(file, problems);
  return result.data;
}

export function loadEstateConfig(file: string): EstateConfig {
  let text: string;
  try {
    text = readFileSync(file, 'utf8');
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code;
    throw new ConfigError(file, [{ path: '', message: `cannot read the config file: ${code === 'ENOENT' ? 'file not found' : code === 'EACCES' ? 'permission denied' : (err as Error).message}` }]);
  }
  return parseEstateConfig(text, file);
}

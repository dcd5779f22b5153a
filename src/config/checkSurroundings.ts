import { accessSync, constants, statSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import type { ConfigProblem } from './configError.js';
import type { SiteConfig } from './schema.js';

/**
 * What `run` would refuse that the file alone cannot show: a storage path that is a folder, TLS files
 * that cannot be read, an SMTP password variable that is not set. `check-config` runs these after the
 * file itself is valid. The password variable is looked up in the environment of whoever runs the
 * check; the installed service has its own (systemd reads /etc/pairwatch/env), so that problem says
 * how to check with the service's environment instead.
 */
export function checkSurroundings(config: SiteConfig, env: NodeJS.ProcessEnv): ConfigProblem[] {
  const problems: ConfigProblem[] = [];
  const storage = resolve(config.storage.path);
  const kind = statKind(storage);
  if (kind === 'folder') problems.push({ path: 'storage.path', message: `${config.storage.path} is a folder; give the database file inside it, e.g. ${config.storage.path.replace(/\/$/, '')}/site.db` });
  else if (kind === 'missing' && statKind(dirname(storage)) === 'file') {
    problems.push({ path: 'storage.path', message: `${dirname(config.storage.path)} is a file, so the database cannot be made inside it` });
  }
  if (config.web.tls) {
    for (const key of ['cert', 'key'] as const) {
      const file = config.web.tls[key];
      const problem = unreadable(resolve(file));
      if (problem) problems.push({ path: `web.tls.${key}`, message: `cannot read ${file}: ${problem}` });
    }
  }
  const passEnv = config.mail.smtp?.pass_env;
  if (passEnv !== undefined && !env[passEnv]) {
    problems.push({
      path: 'mail.smtp.pass_env',
      message:
        `${passEnv} is not set here, and the monitor will not send mail without it. This check needs the service's own environment: ` +
        `put ${passEnv}=… in /etc/pairwatch/env, then check as the service does: sudo -u pairwatch sh -c 'set -a; . /etc/pairwatch/env; pairwatch check-config FILE'`,
    });
  }
  return problems;
}

function statKind(path: string): 'file' | 'folder' | 'missing' {
  try {
    return statSync(path).isDirectory() ? 'folder' : 'file';
  } catch {
    return 'missing';
  }
}

function unreadable(file: string): string | undefined {
  try {
    if (statSync(file).isDirectory()) return 'it is a folder, not a PEM file';
    accessSync(file, constants.R_OK);
    return undefined;
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code;
    return code === 'ENOENT' ? 'file not found' : code === 'EACCES' ? 'permission denied' : ((err as Error).message ?? String(err));
  }
}

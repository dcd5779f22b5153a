import { randomBytes } from 'node:crypto';
import { join } from 'node:path';
import { parseArgs } from 'node:util';
import { findPackageRoot } from '../store/packageRoot.js';
import { findUserByName, insertUser, updateUserPassword } from '../store/userRepo.js';
import { hashPassword } from '../web/auth/passwordHash.js';
import type { CliCommand } from './cliTypes.js';
import { loadConfigForCli } from './loadConfigForCli.js';
import { runMonitorUntilSignal } from './runCommand.js';

export const DEMO_USER = 'demo';

/**
 * `pairwatch demo`: the invented site in config/demo.yaml with a simulated decoder. Within two
 * minutes one loop trips and one cable is cut and repaired. Prints where to look and how to log in.
 */
export const demoCommand: CliCommand = async (argv, io) => {
  const { values } = parseArgs({ args: argv, options: { config: { type: 'string' }, listen: { type: 'string' }, estate: { type: 'boolean', default: false } } });
  if (values.estate) return (await import('./estateDemo.js')).runEstateDemo(io, values.listen); // issue 12
  const file = values.config ?? join(findPackageRoot(), 'config', 'demo.yaml');
  const loaded = loadConfigForCli(file, io);
  if (!loaded) return 2;
  const config = values.listen ? { ...loaded, web: { ...loaded.web, listen: values.listen } } : loaded;
  // A fresh password each start, printed once: the demo never ships a known password.
  const password = randomBytes(12).toString('base64url'); // 16 characters: the sign-in minimum is 15
  return runMonitorUntilSignal(config, file, io, {
    onStarted: async (monitor, logger) => {
      const hashed = await hashPassword(password);
      const db = monitor.store.db;
      if (findUserByName(db, DEMO_USER)) updateUserPassword(db, DEMO_USER, hashed.hash, hashed.salt);
      else insertUser(db, { name: DEMO_USER, role: 'operator', passwordHash: hashed.hash, passwordSalt: hashed.salt, createdAt: Date.now() });
      const url = `http://${config.web.listen}/`;
      logger.info({ url, user: DEMO_USER }, `demo ready: open ${url} and log in as "${DEMO_USER}" with password "${password}"`);
      io.stdout.write(
        `\n  pairwatch demo — ${config.site.name}\n` +
          `  Open ${url} (a phone-sized window works best)\n` +
          `  Log in as:  ${DEMO_USER}   password:  ${password}\n` +
          `  Mail goes to ${monitor.mailFolder ?? 'the SMTP server'} as .eml files. Stop with Ctrl-C.\n` +
          `  Watch: the pump-house cable is cut at 0:25 and repaired at 1:10; the glasshouse freezes at 0:40.\n\n`,
      );
    },
  });
};

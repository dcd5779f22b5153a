import { randomBytes } from 'node:crypto';
import { join } from 'node:path';
import { parseArgs } from 'node:util';
import { findPackageRoot } from '../store/openDatabase.js';
import { findUserByName, insertUser, updateUserPassword } from '../store/accountRepos.js';
import { hashPassword } from '../web/auth/passwordHash.js';
import { defineCommand } from './defineCommand.js';
import { loadConfigForCli } from './loadConfigForCli.js';
import { runMonitorUntilSignal } from './runCommand.js';

export const DEMO_USER = 'demo';

/**
 * `pairwatch demo`: the invented site in config/demo.yaml with a simulated decoder. Within two
 * minutes one loop trips and one cable is cut and repaired. Prints where to look and how to sign in.
 */
const USAGE = `usage: pairwatch demo [--listen HOST:PORT] [--config FILE] [--estate]
  The invented site in config/demo.yaml with a simulated decoder. Prints the address and a fresh
  password for the user "${DEMO_USER}" once start-up is done. Stop with Ctrl-C.
  --listen HOST:PORT  where the web server listens (default 127.0.0.1:8080)
  --estate            instead: a local MQTT broker, three invented sites and the estate board
`;

export const demoCommand = defineCommand({ name: 'demo', usage: USAGE, run: async (argv, io) => {
  const { values } = parseArgs({ args: argv, options: { config: { type: 'string' }, listen: { type: 'string' }, estate: { type: 'boolean', default: false } } });
  if (values.estate) return (await import('./estateDemo.js')).runEstateDemo(io, values.listen);
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
      // The password goes to the terminal only, never into the log (logs are kept and shipped).
      logger.info({ url, user: DEMO_USER }, `demo ready at ${url}; the password for "${DEMO_USER}" is on the terminal`);
      // Printed last, after the start-up log lines have been written, so it is what stays on screen.
      await flushLogs(logger);
      io.stdout.write(
        `\n  pairwatch demo — ${config.site.name}\n` +
          `  Open ${url} (a phone-sized window works best)\n` +
          `  Sign in as:  ${DEMO_USER}   password:  ${password}\n` +
          `  Mail goes to ${monitor.mailFolder ?? 'the SMTP server'} as .eml files. Stop with Ctrl-C.\n` +
          `  Watch: the pump-house cable is cut at 0:25 and repaired at 1:10; the glasshouse freezes at 0:40.\n\n`,
      );
    },
  });
} });

/** Waits until the logger's pending lines are out, so the banner is not buried under them. */
async function flushLogs(logger: { flush?: (cb?: (err?: Error) => void) => void }): Promise<void> {
  await new Promise<void>((resolveFlush) => {
    if (typeof logger.flush !== 'function') return resolveFlush();
    try {
      logger.flush(() => resolveFlush());
    } catch {
      resolveFlush();
    }
  });
  await new Promise((resolveTick) => setTimeout(resolveTick, 50));
}

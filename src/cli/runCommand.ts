import { dirname, resolve } from 'node:path';
import { parseArgs } from 'node:util';
import { createRequire } from 'node:module';
import type { Logger } from 'pino';
import type { SiteConfig } from '../config/schema.js';
import { createLogger } from '../daemon/createLogger.js';
import { startMonitor, type Monitor, type StartMonitorOptions } from '../daemon/startMonitor.js';
import type { CliIo } from './cliTypes.js';
import { defineCommand } from './defineCommand.js';
import { DEFAULT_CONFIG_PATH, loadConfigForCli } from './loadConfigForCli.js';

/** The daemon exits within this long of SIGTERM, whatever is still pending (the outbox keeps it). */
const STOP_DEADLINE_MS = 9000;

export function packageVersion(): string {
  return (createRequire(import.meta.url)('../../../package.json') as { version: string }).version;
}

/** Starts the monitor and keeps it running until SIGTERM or SIGINT, then stops it cleanly. */
export async function runMonitorUntilSignal(
  config: SiteConfig,
  configFile: string,
  io: CliIo,
  extra: Partial<StartMonitorOptions> & { logger?: Logger; onStarted?: (monitor: Monitor, logger: Logger) => Promise<void> | void } = {},
): Promise<number> {
  const logger = extra.logger ?? createLogger();
  let monitor: Monitor;
  try {
    monitor = await startMonitor({ config, configDir: dirname(resolve(configFile)), logger, version: packageVersion(), ...extra });
  } catch (err) {
    const e = err as { code?: string; message: string };
    logger.error({ code: e.code }, `cannot start: ${e.message}`);
    io.stderr.write(`pairwatch: cannot start: ${e.message}${e.code ? ` (${e.code})` : ''}\n`);
    return 1;
  }
  await extra.onStarted?.(monitor, logger);
  return new Promise<number>((resolveExit) => {
    const onSignal = (signal: NodeJS.Signals) => {
      logger.info({ signal }, `stopping on ${signal}`);
      const hardStop = setTimeout(() => {
        logger.error('stop took too long; exiting anyway (pending mail stays in the outbox)');
        resolveExit(1);
      }, STOP_DEADLINE_MS + 1000);
      hardStop.unref();
      monitor
        .stop(signal === 'SIGTERM' ? 'stopped by the service manager (SIGTERM)' : `stopped by ${signal}`, STOP_DEADLINE_MS - 2000)
        .then(() => resolveExit(0), (err: unknown) => {
          logger.error({ err }, `error while stopping: ${(err as Error).message}`);
          resolveExit(1);
        })
        .finally(() => clearTimeout(hardStop));
    };
    process.once('SIGTERM', onSignal);
    process.once('SIGINT', onSignal);
  });
}

const USAGE = `usage: pairwatch run [--config FILE]
  The monitor: reads every decoder, classifies loops, stores everything, mails, serves the pages and API.
  Stops cleanly on SIGTERM or Ctrl-C. The installed service runs it as: pairwatch run --config /etc/pairwatch/site.yaml
  --config FILE  the site config (default ${DEFAULT_CONFIG_PATH})
`;

/** `pairwatch run --config FILE`: the monitor daemon. */
export const runCommand = defineCommand({
  name: 'run',
  usage: USAGE,
  run: async (argv, io) => {
    const { values } = parseArgs({ args: argv, options: { config: { type: 'string', default: DEFAULT_CONFIG_PATH } } });
    const file = values.config ?? DEFAULT_CONFIG_PATH;
    const config = loadConfigForCli(file, io);
    if (!config) return 2;
    return runMonitorUntilSignal(config, file, io);
  },
});

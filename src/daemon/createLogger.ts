import pino, { type Logger } from 'pino';

/**
 * One JSON line per event (journald keeps them as they are); pretty, human lines when a person is
 * watching a terminal. PAIRWATCH_LOG_LEVEL overrides the level.
 */
export function createLogger(options: { pretty?: boolean; level?: string; destination?: NodeJS.WritableStream } = {}): Logger {
  const level = options.level ?? process.env.PAIRWATCH_LOG_LEVEL ?? 'info';
  const pretty = options.pretty ?? Boolean(process.stdout.isTTY);
  if (options.destination) return pino({ level, base: { app: 'pairwatch' } }, options.destination as pino.DestinationStream);
  if (pretty) {
    return pino({
      level,
      transport: { target: 'pino-pretty', options: { colorize: true, translateTime: 'SYS:HH:MM:ss', ignore: 'pid,hostname,app' } },
    });
  }
  return pino({ level, base: { app: 'pairwatch' } });
}

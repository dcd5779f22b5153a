import { pino, type Logger } from 'pino';

/** The monitor logs every state change; a bench must not measure the terminal. */
export function silentLogger(): Logger {
  return pino({ level: 'silent' });
}

/** The slice of a pino logger the notification code uses; tests pass a recording fake. */
export interface NotifyLogger {
  info(obj: object, msg: string): void;
  warn(obj: object, msg: string): void;
  error(obj: object, msg: string): void;
}

export const silentLogger: NotifyLogger = {
  info() {},
  warn() {},
  error() {},
};

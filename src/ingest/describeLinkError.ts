/** Turns what the OS or serialport throws into one plain sentence a farm-office user can act on. */
export function describeLinkError(err: unknown, target: string): string {
  const e = err as { code?: string; message?: string; disconnected?: boolean };
  const message = typeof e?.message === 'string' ? e.message : String(err);
  if (e?.disconnected) return `${target} was disconnected (cable pulled or device reset)`;
  // serialport's native errors carry only the OS text ("No such file or directory, cannot open …").
  const code = e?.code ?? /\b(E[A-Z]{2,})\b/.exec(message)?.[1] ?? codeFromText(message);
  switch (code) {
    case 'ENOENT':
      return `${target} does not exist (is the decoder plugged in?)`;
    case 'EACCES':
    case 'EPERM':
      return `permission denied on ${target} (the service user needs to be in the dialout group)`;
    case 'EBUSY':
      return `${target} is in use by another program`;
    case 'ENXIO':
    case 'ENODEV':
    case 'EIO':
      return `${target} stopped responding (device removed or reset)`;
    case 'ECONNREFUSED':
      return `${target} refused the connection (nothing listening there)`;
    case 'ECONNRESET':
      return `${target} reset the connection`;
    case 'ETIMEDOUT':
      return `${target} did not answer in time`;
    case 'EHOSTUNREACH':
    case 'ENETUNREACH':
      return `${target} is unreachable on the network`;
    case 'ENOTFOUND':
    case 'EAI_AGAIN':
      return `the host name in ${target} cannot be resolved`;
    default:
      break;
  }
  if (/lock/i.test(message)) return `${target} is locked by another program`;
  return `${target}: ${message.split('\n')[0]}`;
}

const OS_TEXT: ReadonlyArray<[RegExp, string]> = [
  [/no such file or directory/i, 'ENOENT'],
  [/permission denied/i, 'EACCES'],
  [/operation not permitted/i, 'EPERM'],
  [/resource busy/i, 'EBUSY'],
  [/no such device/i, 'ENODEV'],
  [/input\/output error/i, 'EIO'],
];

function codeFromText(message: string): string | undefined {
  return OS_TEXT.find(([pattern]) => pattern.test(message))?.[1];
}

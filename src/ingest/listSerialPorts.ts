import { accessSync, constants } from 'node:fs';
import { delimiter, join } from 'node:path';
import { SerialPort } from 'serialport';

export interface SerialPortEntry {
  path: string;
  manufacturer?: string;
  serialNumber?: string;
  vendorId?: string;
  productId?: string;
  /** The stable /dev/serial/by-id name, when udev made one. */
  pnpId?: string;
}

export type SerialPortListing = { ok: true; ports: SerialPortEntry[] } | { ok: false; reason: string };

export interface ListSerialPortsOptions {
  /** Stand-ins for tests; default: serialport's own listing, this platform and PATH. */
  list?: () => Promise<Array<Partial<SerialPortEntry> & { path: string }>>;
  platform?: NodeJS.Platform;
  searchPath?: string;
}

/**
 * The serial ports this machine has. On Linux serialport lists them through udev's `udevadm`; where
 * that is missing (a minimal container, a system without udev) this says so instead of throwing.
 */
export async function listSerialPorts(options: ListSerialPortsOptions = {}): Promise<SerialPortListing> {
  const platform = options.platform ?? process.platform;
  if (platform === 'linux' && !onPath('udevadm', options.searchPath ?? process.env.PATH ?? '')) {
    return {
      ok: false,
      reason: 'cannot list serial ports: udevadm (from the udev/systemd package) is not installed or not on PATH; the decoder can still be named by its path, e.g. /dev/ttyACM0',
    };
  }
  try {
    const found = await (options.list ?? (() => SerialPort.list()))();
    return {
      ok: true,
      ports: found.map((p) => {
        const entry: SerialPortEntry = { path: p.path };
        for (const key of ['manufacturer', 'serialNumber', 'vendorId', 'productId', 'pnpId'] as const) {
          const value = p[key];
          if (typeof value === 'string' && value !== '') entry[key] = value;
        }
        return entry;
      }),
    };
  } catch (err) {
    return { ok: false, reason: `cannot list serial ports: ${(err as Error).message ?? String(err)}` };
  }
}

function onPath(command: string, searchPath: string): boolean {
  for (const dir of searchPath.split(delimiter)) {
    if (!dir) continue;
    try {
      accessSync(join(dir, command), constants.X_OK);
      return true;
    } catch {
      // not in this folder
    }
  }
  return false;
}

import { parseArgs } from 'node:util';
import type { CliCommand, CliIo } from './cliTypes.js';
import { defineCommand } from './defineCommand.js';
import { findOnPath } from '../ops/ports/findOnPath.js';
import { nameFromSerial, udevRuleLine, UDEV_LINK_PREFIX } from '../ops/ports/udevRuleLine.js';

/** What `pairwatch ports` needs to know about one port; the shape serialport's `SerialPort.list()` returns. */
export interface ListedPort {
  path: string;
  manufacturer?: string | undefined;
  serialNumber?: string | undefined;
  vendorId?: string | undefined;
  productId?: string | undefined;
  pnpId?: string | undefined;
}

export interface PortsCommandDeps {
  listPorts: () => Promise<ListedPort[]>;
  /** Full path of an executable on PATH, or null. */
  findExecutable: (command: string, env: NodeJS.ProcessEnv) => string | null;
  platform: NodeJS.Platform;
}

const RULES_FILE = '/etc/udev/rules.d/99-pairwatch-decoder.rules';

const defaultDeps: PortsCommandDeps = {
  listPorts: async () => {
    // Loaded on use: the native binding is only needed when ports are actually listed.
    const { SerialPort } = await import('serialport');
    return SerialPort.list();
  },
  findExecutable: (command, env) => findOnPath(command, env.PATH),
  platform: process.platform,
};

const USAGE = 'usage: pairwatch ports\n  Lists serial ports and prints a udev rule line for each USB adapter.\n';

export function createPortsCommand(deps: PortsCommandDeps = defaultDeps): CliCommand {
  return defineCommand({ name: 'ports', usage: USAGE, run: async (argv, io) => {
    parseArgs({ args: argv, options: {}, strict: true, allowPositionals: false });
    // On Linux serialport reads the device list from udev's database through `udevadm`.
    if (deps.platform === 'linux' && deps.findExecutable('udevadm', io.env) === null) {
      io.stderr.write(
        'pairwatch ports: cannot list serial ports: the udevadm program is not on PATH (serial port listing reads udev\'s device database).\n' +
          '  fix: install udev (apt-get install udev), or on a minimal system look in /dev/serial/by-id/ for the adapter.\n',
      );
      return 1;
    }
    let ports: ListedPort[];
    try {
      ports = await deps.listPorts();
    } catch (err) {
      io.stderr.write(
        `pairwatch ports: cannot list serial ports: ${plainReason(err)}\n` +
          '  fix: check that udev is running (systemctl status systemd-udevd); in a container, pass the device in and look in /dev/serial/by-id/.\n',
      );
      return 1;
    }
    printPorts(ports, io);
    return 0;
  } });
}

function plainReason(err: unknown): string {
  const message = err instanceof Error ? err.message : String(err);
  return message.split('\n')[0] ?? 'unknown error';
}

function printPorts(ports: readonly ListedPort[], io: CliIo): void {
  const out = (text: string) => io.stdout.write(`${text}\n`);
  if (ports.length === 0) {
    out('No serial ports found. Plug in the decoder\'s USB cable and run `pairwatch ports` again.');
    return;
  }
  const usb = ports.filter((p) => p.vendorId && p.productId);
  const other = ports.filter((p) => !(p.vendorId && p.productId));
  const usedNames = new Set<string>();
  for (const port of usb) {
    out(`${port.path}  USB ${port.vendorId}:${port.productId}  maker: ${port.manufacturer ?? '(not given)'}  serial: ${port.serialNumber ?? '(none)'}`);
    if (!port.serialNumber) {
      out('  This adapter has no serial number, so udev cannot tell it apart from another of the same kind.');
      out('  Use its /dev/serial/by-path/… name as the decoder port (stable while it stays in the same USB socket).');
      continue;
    }
    let name = nameFromSerial(port.serialNumber);
    for (let n = 2; usedNames.has(name); n++) name = `${nameFromSerial(port.serialNumber)}-${n}`;
    usedNames.add(name);
    const rule = udevRuleLine({ vendorId: port.vendorId!, productId: port.productId!, serialNumber: port.serialNumber, name });
    if (!rule.ok) {
      out(`  No rule printed: ${rule.reason}. Use its /dev/serial/by-id/… name as the decoder port instead.`);
      continue;
    }
    out(`  udev rule (one line, for ${RULES_FILE}):`);
    out(`  ${rule.line}`);
    out(`  then the decoder's port is /dev/${UDEV_LINK_PREFIX}${name} (rename "${name}" in the rule to the decoder id if you like)`);
  }
  for (const port of other) out(`${port.path}  (no USB details: a built-in or virtual port; no rule needed)`);
  if (usb.some((p) => p.serialNumber)) {
    out('');
    out(`After pasting: sudo udevadm control --reload && sudo udevadm trigger --subsystem-match=tty`);
    out('and set decoders[].port in the config to the /dev/pairwatch-decoder-… name.');
  }
}

export const portsCommand: CliCommand = createPortsCommand();

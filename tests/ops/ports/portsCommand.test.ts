import { describe, expect, it } from 'vitest';
import { createPortsCommand, portsCommand, type ListedPort, type PortsCommandDeps } from '../../../src/cli/portsCommand.js';
import { captureCliIo } from '../../helpers/captureCliIo.js';

const captureIo = (env: NodeJS.ProcessEnv = { PATH: '/usr/bin' }) => captureCliIo({ env });

const deps = (ports: ListedPort[] | Error, udevadm: string | null = '/usr/bin/udevadm'): PortsCommandDeps => ({
  listPorts: async () => {
    if (ports instanceof Error) throw ports;
    return ports;
  },
  findExecutable: () => udevadm,
  platform: 'linux',
});

describe('pairwatch ports', () => {
  it('lists each adapter and prints the udev rule line to paste', async () => {
    const { io, out, err } = captureIo();
    const code = await createPortsCommand(
      deps([
        { path: '/dev/ttyUSB0', manufacturer: 'Example Ltd', serialNumber: 'BX-0042', vendorId: '1209', productId: 'AB01' },
        { path: '/dev/ttyACM0', manufacturer: 'Cheap Co', vendorId: '1a86', productId: '7523' },
        { path: '/dev/ttyS0' },
      ]),
    )([], io);
    expect(code).toBe(0);
    expect(out()).toContain('/dev/ttyUSB0  USB 1209:AB01  maker: Example Ltd  serial: BX-0042');
    expect(out()).toContain(
      'SUBSYSTEM=="tty", ATTRS{idVendor}=="1209", ATTRS{idProduct}=="ab01", ATTRS{serial}=="BX-0042", SYMLINK+="pairwatch-decoder-bx-0042"',
    );
    expect(out()).toContain('/dev/pairwatch-decoder-bx-0042');
    expect(out()).toContain('has no serial number');
    expect(out()).toContain('/dev/ttyS0  (no USB details');
    expect(out()).toContain('udevadm control --reload');
  });

  it('explains a missing udevadm with a fix, exit 1, no stack trace', async () => {
    const { io, out, err } = captureIo();
    const code = await createPortsCommand(deps([], null))([], io);
    expect(code).toBe(1);
    expect(err()).toContain('udevadm program is not on PATH');
    expect(err()).toContain('apt-get install udev');
    expect(err()).not.toMatch(/\n\s+at /);
  });

  it('explains a listing that fails', async () => {
    const { io, out, err } = captureIo();
    const code = await createPortsCommand(deps(new Error('Error listing ports udevadm exited with error code: 1\n    at stack')))([], io);
    expect(code).toBe(1);
    expect(err()).toContain('cannot list serial ports: Error listing ports udevadm exited with error code: 1\n');
    expect(err()).toContain('fix:');
    expect(err()).not.toContain('at stack');
  });

  it('says so when there are no ports', async () => {
    const { io, out, err } = captureIo();
    expect(await createPortsCommand(deps([]))([], io)).toBe(0);
    expect(out()).toContain('No serial ports found');
  });

  it('rejects unknown options with exit 2', async () => {
    const { io, out, err } = captureIo();
    expect(await createPortsCommand(deps([]))(['--colour'], io)).toBe(2);
    expect(err()).toContain('usage: pairwatch ports');
  });

  it('really lists through serialport and udevadm on this machine', async () => {
    const { io, out, err } = captureIo(process.env);
    const code = await portsCommand([], io);
    // Either ports are listed or the reason is printed; never a throw.
    expect([0, 1]).toContain(code);
    expect(out() + err()).toMatch(/serial ports|\/dev\//i);
  });
});

import { chmodSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { describeLinkError } from '../../src/ingest/describeLinkError.js';
import { listSerialPorts } from '../../src/ingest/listSerialPorts.js';

describe('listSerialPorts', () => {
  it('says why when udevadm is missing on Linux, instead of throwing', async () => {
    const result = await listSerialPorts({ platform: 'linux', searchPath: '' });
    expect(result.ok).toBe(false);
    expect(!result.ok && result.reason).toMatch(/udevadm .* not installed or not on PATH/);
  });

  it('turns a failing listing into a reason', async () => {
    // A folder of our own holding an executable udevadm, so the case does not depend on this machine having udev.
    const bin = mkdtempSync(join(tmpdir(), 'pw-udevadm-'));
    writeFileSync(join(bin, 'udevadm'), '#!/bin/sh\nexit 1\n');
    chmodSync(join(bin, 'udevadm'), 0o755);
    const result = await listSerialPorts({ platform: 'linux', searchPath: bin, list: () => Promise.reject(new Error('udevadm exited with 1')) });
    expect(result).toEqual({ ok: false, reason: 'cannot list serial ports: udevadm exited with 1' });
  });

  it('keeps only the fields that have values', async () => {
    const result = await listSerialPorts({
      platform: 'darwin',
      list: async () => [{ path: '/dev/ttyACM0', manufacturer: 'Maker', serialNumber: '', vendorId: '1234' }],
    });
    expect(result).toEqual({ ok: true, ports: [{ path: '/dev/ttyACM0', manufacturer: 'Maker', vendorId: '1234' }] });
  });

  it('lists this machine through serialport when it can', async () => {
    const result = await listSerialPorts();
    // A container may have no serial ports at all; either answer is fine, a throw is not.
    if (result.ok) expect(Array.isArray(result.ports)).toBe(true);
    else expect(result.reason).toMatch(/^cannot list serial ports/);
  });
});

describe('describeLinkError', () => {
  it('gives plain reasons for the usual failures', () => {
    expect(describeLinkError(new Error('Error: No such file or directory, cannot open /dev/ttyACM0'), '/dev/ttyACM0')).toBe(
      '/dev/ttyACM0 does not exist (is the decoder plugged in?)',
    );
    expect(describeLinkError(Object.assign(new Error('x'), { code: 'EACCES' }), '/dev/ttyUSB0')).toMatch(/permission denied .*dialout/);
    expect(describeLinkError(Object.assign(new Error('gone'), { disconnected: true }), '/dev/ttyUSB0')).toBe('/dev/ttyUSB0 was disconnected (cable pulled or device reset)');
    expect(describeLinkError(new Error('Error Resource temporarily unavailable Cannot lock port'), '/dev/ttyS0')).toBe('/dev/ttyS0 is locked by another program');
    expect(describeLinkError('weird\nsecond line', 'x')).toBe('x: weird');
  });
});

import { describe, expect, it } from 'vitest';
import { checkDevicePort, type DevicePortFs } from '../../../src/ops/doctor/checkDecoder.js';

function fakeFs(overrides: Partial<DevicePortFs> = {}): DevicePortFs {
  return {
    stat: async () => ({ isCharacterDevice: () => true, gid: 20, mode: 0o20660 }),
    access: async () => undefined,
    groupName: (gid) => (gid === 20 ? 'dialout' : null),
    userName: () => 'pairwatch',
    ...overrides,
  };
}
const enoent = () => Object.assign(new Error('ENOENT: no such file or directory'), { code: 'ENOENT' });

describe('checkDevicePort', () => {
  it('passes a device the user may open', async () => {
    const result = await checkDevicePort('decoder main port', '/dev/ttyACM0', fakeFs());
    expect(result).toMatchObject({ status: 'ok' });
    expect(result.finding).toContain('group dialout, mode 0660');
  });

  it('fails a missing device and points at the cable, `pairwatch ports` and the udev rule', async () => {
    const result = await checkDevicePort('decoder main port', '/dev/pairwatch-decoder-main', fakeFs({ stat: async () => Promise.reject(enoent()) }));
    expect(result.status).toBe('fail');
    expect(result.finding).toContain('does not exist');
    expect(result.fix).toMatch(/USB cable/);
    expect(result.fix).toMatch(/pairwatch ports/);
    expect(result.fix).toMatch(/udev/);
  });

  it('fails without permission and says which group to join', async () => {
    const denied = Object.assign(new Error('EACCES'), { code: 'EACCES' });
    const result = await checkDevicePort('decoder main port', '/dev/ttyACM0', fakeFs({ access: async () => Promise.reject(denied), userName: () => 'alice' }));
    expect(result.status).toBe('fail');
    expect(result.fix).toContain('usermod -aG dialout alice');
  });

  it('fails a path that is not a device', async () => {
    const result = await checkDevicePort('decoder main port', '/tmp/notes.txt', fakeFs({ stat: async () => ({ isCharacterDevice: () => false, gid: 0, mode: 0o100644 }) }));
    expect(result.status).toBe('fail');
    expect(result.finding).toContain('not a device');
  });
});

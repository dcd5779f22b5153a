import { describe, expect, it } from 'vitest';
import { checkClockSync, TIMESYNC_FLAG } from '../../../src/ops/doctor/checkClockSync.js';

describe('checkClockSync', () => {
  it('reads timedatectl', async () => {
    expect((await checkClockSync({ timedatectl: async () => 'yes\n', exists: async () => false })).status).toBe('ok');
    const no = await checkClockSync({ timedatectl: async () => 'no\n', exists: async () => false });
    expect(no.status).toBe('warn');
    expect(no.fix).toContain('timedatectl set-ntp true');
  });

  it('falls back to the timesyncd flag file, and says "unknown" when neither tells', async () => {
    const flagged = await checkClockSync({ timedatectl: async () => null, exists: async (p) => p === TIMESYNC_FLAG });
    expect(flagged.status).toBe('ok');
    const unknown = await checkClockSync({ timedatectl: async () => null, exists: async () => false });
    expect(unknown.status).toBe('warn');
    expect(unknown.finding).toMatch(/^unknown/);
  });
});

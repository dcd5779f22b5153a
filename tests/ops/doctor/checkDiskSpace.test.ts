import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { checkDiskSpace, DISK_FAIL_BYTES, DISK_WARN_BYTES, type DiskDeps } from '../../../src/ops/doctor/checkDiskSpace.js';
import { createDoctorDeps } from '../../../src/ops/doctor/defaultDoctorDeps.js';
import { useTempDirs } from '../../helpers/tempDir.js';

const tempDir = useTempDirs();

const MiB = 1024 * 1024;
function deps(free: number, existing: string[] = ['/var/lib/pairwatch', '/var/lib', '/var', '/'], writable = true): DiskDeps {
  return { freeBytes: async () => free, exists: async (p) => existing.includes(p), writable: async () => writable, cwd: () => '/srv' };
}

describe('checkDiskSpace', () => {
  it('applies the brief\'s thresholds: warn under 500 MB, fail under 50 MB', async () => {
    expect(DISK_WARN_BYTES).toBe(500 * MiB);
    expect(DISK_FAIL_BYTES).toBe(50 * MiB);
    expect((await checkDiskSpace('/var/lib/pairwatch/site.db', deps(2048 * MiB))).status).toBe('ok');
    expect((await checkDiskSpace('/var/lib/pairwatch/site.db', deps(499 * MiB))).status).toBe('warn');
    const full = await checkDiskSpace('/var/lib/pairwatch/site.db', deps(49 * MiB));
    expect(full.status).toBe('fail');
    expect(full.finding).toContain('49 MiB');
  });

  it('measures the nearest existing folder and notes a relative path', async () => {
    const result = await checkDiskSpace('data/site.db', deps(1024 * MiB, ['/srv', '/']));
    expect(result.status).toBe('ok');
    expect(result.finding).toContain('/srv (/srv/data does not exist yet');
    expect(result.finding).toContain('resolved from /srv');
  });

  it('fails a folder the user cannot write', async () => {
    const result = await checkDiskSpace('/var/lib/pairwatch/site.db', deps(1024 * MiB, undefined, false));
    expect(result.status).toBe('fail');
    expect(result.fix).toContain('chown pairwatch');
  });

  it('reads real free space with fs.statfs', async () => {
    const folder = tempDir('pw-disk-');
    const result = await checkDiskSpace(join(folder, 'site.db'), createDoctorDeps().disk);
    expect(result.finding).toMatch(/(MiB|GiB) free at /);
  });
});

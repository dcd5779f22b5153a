import { execFileSync, spawnSync } from 'node:child_process';
import { copyFileSync, existsSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { useTempDirs } from '../helpers/tempDir.js';

const tempDir = useTempDirs();

const UNIT = join(import.meta.dirname, '../../deploy/pairwatch.service');

/** The [Section] → key → values of a unit file, as systemd.syntax(7) describes the format. */
function readUnit(text: string): Map<string, Map<string, string[]>> {
  const sections = new Map<string, Map<string, string[]>>();
  let current: Map<string, string[]> | undefined;
  for (const raw of text.split('\n')) {
    const line = raw.trim();
    if (line === '' || line.startsWith('#') || line.startsWith(';')) continue;
    const header = /^\[(.+)\]$/.exec(line);
    if (header) {
      current = new Map();
      sections.set(header[1]!, current);
      continue;
    }
    const eq = line.indexOf('=');
    expect(eq, `not key=value: ${line}`).toBeGreaterThan(0);
    expect(current, `key before any section: ${line}`).toBeDefined();
    const key = line.slice(0, eq);
    current!.set(key, [...(current!.get(key) ?? []), line.slice(eq + 1)]);
  }
  return sections;
}

describe('deploy/pairwatch.service', () => {
  it('passes systemd-analyze verify with no warnings', () => {
    const analyze = spawnSync('systemd-analyze', ['--version']);
    expect(analyze.error, 'systemd-analyze is missing: install Debian\'s systemd package (.ci/run does)').toBeUndefined();
    const dir = tempDir('pw-unit-');
    const copy = join(dir, 'pairwatch.service');
    // verify checks that ExecStart's program exists; the unit names /usr/bin/node (Debian's nodejs).
    // Where Node lives elsewhere, point the test copy at this Node instead.
    let text = readFileSync(UNIT, 'utf8');
    if (!existsSync('/usr/bin/node')) text = text.replace('ExecStart=/usr/bin/node', `ExecStart=${process.execPath}`);
    writeFileSync(copy, text);
    const result = spawnSync('systemd-analyze', ['verify', '--man=no', copy], { encoding: 'utf8' });
    // Unknown keys are only warnings (exit 0), so the output must be empty too.
    const complaints = `${result.stdout}${result.stderr}`.split('\n').filter((l) => l.includes('pairwatch.service'));
    expect(complaints).toEqual([]);
    expect(result.status).toBe(0);
  });

  it('a misspelt directive would be caught by the same check', () => {
    // Guards the guard: systemd-analyze really reports unknown keys in this environment.
    const dir = tempDir('pw-unit-bad-');
    const copy = join(dir, 'pairwatch.service');
    copyFileSync(UNIT, copy);
    writeFileSync(copy, readFileSync(copy, 'utf8').replace('NoNewPrivileges=yes', 'NoNewPrivilege=yes').replace('ExecStart=/usr/bin/node', `ExecStart=${process.execPath}`));
    const result = spawnSync('systemd-analyze', ['verify', '--man=no', copy], { encoding: 'utf8' });
    expect(result.stderr).toContain("Unknown key 'NoNewPrivilege'");
  });

  it('has the settings the operations issue asks for', () => {
    const unit = readUnit(readFileSync(UNIT, 'utf8'));
    const service = unit.get('Service')!;
    const one = (key: string) => service.get(key)?.[0];
    expect(one('ExecStart')).toBe('/usr/bin/node --max-semi-space-size=1 --max-old-space-size=256 /opt/pairwatch/dist/src/cli/main.js run --config /etc/pairwatch/site.yaml');
    // glibc's per-thread arenas capped (glibc manual, "Memory Allocation Tunables": MALLOC_ARENA_MAX).
    expect(service.get('Environment')).toContain('MALLOC_ARENA_MAX=1');
    expect(one('User')).toBe('pairwatch');
    expect(one('SupplementaryGroups')).toBe('dialout');
    expect(one('Restart')).toBe('on-failure');
    expect(Number(one('RestartSec'))).toBeGreaterThan(0);
    expect(one('TimeoutStopSec')).toBe('15');
    expect(one('NoNewPrivileges')).toBe('yes');
    expect(one('ProtectSystem')).toBe('strict');
    expect(one('ReadWritePaths')).toBe('/var/lib/pairwatch');
    expect(one('PrivateTmp')).toBe('yes');
    expect(one('ProtectHome')).toBe('yes');
    expect(one('StandardOutput')).toBe('journal');
    expect(service.get('DeviceAllow')).toEqual(expect.arrayContaining(['char-ttyACM rw', 'char-ttyUSB rw']));
    expect(unit.get('Unit')!.get('After')![0]).toContain('network-online.target');
    expect(unit.get('Install')!.get('WantedBy')).toEqual(['multi-user.target']);
  });

  it('gives the daemon room for files: LimitNOFILE well above the web connection cap plus what the alarm path keeps (issue 9)', async () => {
    const { siteConfigSchema } = await import('../../src/config/schema.js');
    const { webConnectionCap } = await import('../../src/web/buildWebServer.js');
    const limit = Number(readUnit(readFileSync(UNIT, 'utf8')).get('Service')!.get('LimitNOFILE')?.[0]);
    expect(Number.isInteger(limit)).toBe(true);
    const defaults = siteConfigSchema.shape.web.parse(undefined);
    // At the unit's limit the default cap applies unchanged, and leaves files for mail, database and decoders.
    expect(webConnectionCap(defaults.max_connections, limit)).toBe(defaults.max_connections);
    expect(limit - defaults.max_connections).toBeGreaterThanOrEqual(64);
  });

  it('names the escaped device unit correctly in its comment', () => {
    // systemd.unit(5) path escaping: "/" becomes "-", a literal "-" becomes \x2d; systemd-escape does it.
    const escaped = execFileSync('systemd-escape', ['-p', '/dev/pairwatch-decoder-main'], { encoding: 'utf8' }).trim();
    expect(readFileSync(UNIT, 'utf8')).toContain(`After=${escaped}.device`);
  });
});

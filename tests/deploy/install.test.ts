import { spawnSync } from 'node:child_process';
import { copyFileSync, cpSync, mkdirSync, readdirSync, readFileSync, statSync, writeFileSync, lstatSync } from 'node:fs';
import { createHash } from 'node:crypto';
import { join, relative } from 'node:path';
import { describe, expect, it } from 'vitest';
import { useTempDirs } from '../helpers/tempDir.js';

const tempDir = useTempDirs();

const REPO = join(import.meta.dirname, '../..');

/**
 * A source tree shaped like a built checkout: the real deploy/, config/, migrations/ and package
 * files, and a stand-in dist/ (the real build is not the subject here, and building takes a while).
 */
function sourceTree(): string {
  const dir = tempDir('pw-src-');
  cpSync(join(REPO, 'deploy'), join(dir, 'deploy'), { recursive: true });
  mkdirSync(join(dir, 'config'));
  copyFileSync(join(REPO, 'config/example.yaml'), join(dir, 'config/example.yaml'));
  cpSync(join(REPO, 'migrations'), join(dir, 'migrations'), { recursive: true });
  for (const file of ['package.json', 'package-lock.json', 'README.md', 'LICENSE']) copyFileSync(join(REPO, file), join(dir, file));
  mkdirSync(join(dir, 'dist/src/cli'), { recursive: true });
  writeFileSync(join(dir, 'dist/src/cli/main.js'), '// stand-in for the built CLI\n');
  return dir;
}

function run(script: 'install.sh' | 'uninstall.sh', source: string, root: string, args: string[] = []) {
  const result = spawnSync('bash', [join(source, 'deploy', script), ...args], {
    encoding: 'utf8',
    env: { PATH: process.env.PATH, DESTDIR: root, PAIRWATCH_SOURCE: source },
  });
  return { code: result.status, out: result.stdout, err: result.stderr };
}

/** Every path under root with its type, mode, size, mtime and content hash. */
function snapshot(root: string): Map<string, string> {
  const entries = new Map<string, string>();
  const walk = (dir: string) => {
    for (const name of readdirSync(dir)) {
      const path = join(dir, name);
      const info = lstatSync(path);
      const mode = (info.mode & 0o7777).toString(8);
      if (info.isDirectory()) {
        entries.set(relative(root, path) + '/', `dir ${mode}`);
        walk(path);
      } else {
        const hash = createHash('sha256').update(readFileSync(path)).digest('hex');
        entries.set(relative(root, path), `file ${mode} ${info.size} ${info.mtimeMs} ${hash}`);
      }
    }
  };
  walk(root);
  return entries;
}

const modeOf = (path: string) => (statSync(path).mode & 0o777).toString(8);

describe('deploy/install.sh into a scratch root (DESTDIR)', () => {
  it('lays out the expected tree, and a second run changes nothing', () => {
    const source = sourceTree();
    const root = tempDir('pw-root-');
    const first = run('install.sh', source, root);
    expect(first.err).toBe('');
    expect(first.code).toBe(0);

    const migrations = readdirSync(join(REPO, 'migrations')).map((f) => `opt/pairwatch/migrations/${f}`);
    const files = [...snapshot(root).keys()].filter((p) => !p.endsWith('/')).sort();
    expect(files).toEqual(
      [
        'etc/pairwatch/env',
        'etc/pairwatch/site.yaml',
        'etc/pairwatch/site.yaml.example',
        'etc/systemd/system/pairwatch.service',
        'etc/udev/rules.d/99-pairwatch-decoder.rules',
        'opt/pairwatch/LICENSE',
        'opt/pairwatch/README.md',
        'opt/pairwatch/config/example.yaml',
        'opt/pairwatch/deploy/99-pairwatch-decoder.rules.in',
        'opt/pairwatch/deploy/README.md',
        'opt/pairwatch/deploy/common.sh',
        'opt/pairwatch/deploy/install.sh',
        'opt/pairwatch/deploy/pairwatch.service',
        'opt/pairwatch/deploy/uninstall.sh',
        'opt/pairwatch/dist/src/cli/main.js',
        ...migrations,
        'opt/pairwatch/package-lock.json',
        'opt/pairwatch/package.json',
        'usr/local/bin/pairwatch',
      ].sort(),
    );
    expect(readdirSync(join(root, 'var/lib/pairwatch'))).toEqual([]);
    expect(modeOf(join(root, 'var/lib/pairwatch'))).toBe('750');
    expect(modeOf(join(root, 'etc/pairwatch'))).toBe('750');
    expect(modeOf(join(root, 'etc/pairwatch/site.yaml'))).toBe('640');
    expect(modeOf(join(root, 'etc/pairwatch/env'))).toBe('640');
    expect(modeOf(join(root, 'usr/local/bin/pairwatch'))).toBe('755');
    expect(readFileSync(join(root, 'etc/systemd/system/pairwatch.service'), 'utf8')).toBe(readFileSync(join(REPO, 'deploy/pairwatch.service'), 'utf8'));
    // The installed config keeps its database in the data folder the unit may write.
    expect(readFileSync(join(root, 'etc/pairwatch/site.yaml'), 'utf8')).toContain('path: /var/lib/pairwatch/');
    expect(readFileSync(join(root, 'usr/local/bin/pairwatch'), 'utf8')).toContain('exec /usr/bin/node /opt/pairwatch/dist/src/cli/main.js "$@"');
    // Nothing privileged ran; it said what it would have run.
    expect(first.out).toContain('would run: useradd --system --user-group --groups dialout');
    expect(first.out).toContain('would run: chown pairwatch:pairwatch /var/lib/pairwatch');
    expect(first.out).toContain('would run: systemctl enable pairwatch.service');
    expect(first.out).toContain('skipped node_modules in the scratch root');
    expect(first.out).toContain('not a life-safety system');

    const before = snapshot(root);
    const second = run('install.sh', source, root);
    expect(second.code).toBe(0);
    expect(second.out).toContain('nothing changed');
    expect(snapshot(root)).toEqual(before);
  });

  it('ends with next steps that include adding someone to sign in as (user add)', () => {
    const source = sourceTree();
    const root = tempDir('pw-root-next-');
    const { code, out } = run('install.sh', source, root);
    expect(code).toBe(0);
    const next = out.slice(out.indexOf('Next:'));
    expect(next).toMatch(/pairwatch user add \S+ --role admin --config \/etc\/pairwatch\/site\.yaml/);
    expect(next).toMatch(/pairwatch check-config \/etc\/pairwatch\/site\.yaml/);
  });

  it('never overwrites an edited config, env file or udev rule, yet updates the app', () => {
    const source = sourceTree();
    const root = tempDir('pw-root-');
    expect(run('install.sh', source, root).code).toBe(0);
    const edited = 'site: { name: "Our farm" }\n# edited by hand\n';
    writeFileSync(join(root, 'etc/pairwatch/site.yaml'), edited);
    writeFileSync(join(root, 'etc/pairwatch/env'), 'PAIRWATCH_SMTP_PASS=secret\n');
    writeFileSync(join(root, 'etc/udev/rules.d/99-pairwatch-decoder.rules'), 'SUBSYSTEM=="tty", SYMLINK+="pairwatch-decoder-main"\n');
    writeFileSync(join(source, 'dist/src/cli/main.js'), '// a newer build\n');
    writeFileSync(join(source, 'dist/src/cli/extra.js'), '// a new module\n');

    const again = run('install.sh', source, root);
    expect(again.code).toBe(0);
    expect(again.out).toContain('kept your /etc/pairwatch/site.yaml');
    expect(readFileSync(join(root, 'etc/pairwatch/site.yaml'), 'utf8')).toBe(edited);
    expect(readFileSync(join(root, 'etc/pairwatch/env'), 'utf8')).toBe('PAIRWATCH_SMTP_PASS=secret\n');
    expect(readFileSync(join(root, 'etc/udev/rules.d/99-pairwatch-decoder.rules'), 'utf8')).toContain('pairwatch-decoder-main');
    expect(readFileSync(join(root, 'opt/pairwatch/dist/src/cli/main.js'), 'utf8')).toBe('// a newer build\n');
    expect(readFileSync(join(root, 'opt/pairwatch/dist/src/cli/extra.js'), 'utf8')).toBe('// a new module\n');
  });

  it('refuses an unbuilt checkout with a fix, and unknown options', () => {
    const source = sourceTree();
    const root = tempDir('pw-root-');
    const bad = run('install.sh', source, root, ['--colour']);
    expect(bad.code).toBe(1);
    expect(bad.err).toContain('unknown option "--colour"');
    spawnSync('rm', ['-rf', join(source, 'dist')]);
    const unbuilt = run('install.sh', source, root);
    expect(unbuilt.code).toBe(1);
    expect(unbuilt.err).toContain('the app is not built');
    expect(unbuilt.err).toContain('fix: run npm ci');
    expect(readdirSync(root)).toEqual([]);
  });
});

describe('deploy/uninstall.sh in a scratch root', () => {
  it('keeps config and data unless --purge', () => {
    const source = sourceTree();
    const root = tempDir('pw-root-');
    expect(run('install.sh', source, root).code).toBe(0);
    writeFileSync(join(root, 'var/lib/pairwatch/site.db'), 'data');

    const kept = run('uninstall.sh', source, root);
    expect(kept.code).toBe(0);
    const left = [...snapshot(root).keys()].filter((p) => !p.endsWith('/')).sort();
    expect(left).toEqual(['etc/pairwatch/env', 'etc/pairwatch/site.yaml', 'etc/pairwatch/site.yaml.example', 'etc/udev/rules.d/99-pairwatch-decoder.rules', 'var/lib/pairwatch/site.db']);
    expect(kept.out).toContain('would run: systemctl disable --now pairwatch.service');

    const purged = run('uninstall.sh', source, root, ['--purge']);
    expect(purged.code).toBe(0);
    expect([...snapshot(root).keys()].filter((p) => !p.endsWith('/'))).toEqual([]);
    expect(purged.out).toContain('would run: userdel pairwatch');
  });
});

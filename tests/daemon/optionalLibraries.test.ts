import { execFileSync } from 'node:child_process';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { findPackageRoot } from '../../src/store/openDatabase.js';

/**
 * startMonitor promises that the broker client and the reply inbox's libraries load only when
 * mqtt: or mail.imap: is configured (about 50 MB of resident memory a plain site never needs).
 * Checked in a fresh Node process on the built daemon: after importing it, none of those packages
 * may be in Node's module cache. Their loading when configured is proven by the MQTT and inbox suites.
 */
const OPTIONAL = ['imapflow', 'mailparser', 'mailauth', 'mqtt'];

describe('optional libraries', () => {
  it('are not loaded by the daemon module itself', () => {
    const daemon = join(findPackageRoot(), 'dist', 'src', 'daemon', 'startMonitor.js');
    const probe = `import(${JSON.stringify(daemon)}).then(() => {
      const loaded = new Set();
      for (const file of Object.keys(require.cache)) {
        const m = /node_modules\\/((?:@[^/]+\\/)?[^/]+)\\/(?!.*node_modules)/.exec(file);
        if (m) loaded.add(m[1]);
      }
      process.stdout.write(JSON.stringify([...loaded].sort()));
    })`;
    const loaded = JSON.parse(execFileSync(process.execPath, ['-e', probe], { encoding: 'utf8' })) as string[];
    // The probe must see the daemon's own dependencies, or an empty list would pass for the wrong reason.
    expect(loaded).toContain('fastify');
    expect(loaded).toContain('better-sqlite3');
    for (const name of OPTIONAL) expect(loaded, `${name} loaded without being configured`).not.toContain(name);
  });
});

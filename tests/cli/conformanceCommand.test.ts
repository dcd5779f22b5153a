import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { conformanceCommand } from '../../src/cli/conformanceCommand.js';
import { siteConfigSchema } from '../../src/config/schema.js';
import { captureCliIo } from '../helpers/captureCliIo.js';
import { makeTempDir } from '../helpers/tempDir.js';

describe('pairwatch conformance', () => {
  it('--help prints the usage and exits 0', async () => {
    const cap = captureCliIo();
    expect(await conformanceCommand(['--help'], cap.io)).toBe(0);
    expect(cap.out()).toMatch(/^usage: pairwatch conformance PORT \[--seconds 10\] \[--baud 250000\]/);
  });

  it('no port, or a bad number, is bad usage (exit 2) naming the option', async () => {
    const none = captureCliIo();
    expect(await conformanceCommand([], none.io)).toBe(2);
    expect(none.err()).toMatch(/usage:/);
    const bad = captureCliIo();
    expect(await conformanceCommand(['/dev/null', '--seconds', 'soon'], bad.io)).toBe(2);
    expect(bad.err()).toMatch(/--seconds: "soon" is not a positive number/);
  });

  it('its default speed is the config default, so a decoder that passes here works with a default config', () => {
    const usage = captureCliIo();
    return conformanceCommand(['--help'], usage.io).then(() => {
      const parsed = siteConfigSchema.shape.decoders.element.shape.baud.parse(undefined);
      expect(usage.out()).toContain(`--baud ${parsed}`);
    });
  });

  it('a simulated decoder (sim:FILE) passes every rule', async () => {
    const tmp = makeTempDir('pw-conformance-');
    try {
      const file = join(tmp.dir, 'decoder.yaml');
      writeFileSync(file, 'decoder: { inputs: 4, tick_ms: 100 }\nloops: [{ input: 1 }, { input: 2 }]\n');
      const cap = captureCliIo();
      expect(await conformanceCommand([`sim:${file}`, '--seconds', '1'], cap.io)).toBe(0);
      expect(cap.out().split('\n').filter((l) => l.startsWith('pass '))).toHaveLength(9);
    } finally {
      tmp.cleanup();
    }
  });
});

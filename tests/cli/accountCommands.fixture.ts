import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { PassThrough, Readable } from 'node:stream';
import type { CliCommand, CliIo } from '../../src/cli/cliTypes.js';

/** A temp site (config file + database path) and a way to run a CLI command with captured output. */
export function makeSite(): { dir: string; configFile: string; dbPath: string; cleanup(): void } {
  const dir = mkdtempSync(join(tmpdir(), 'pairwatch-cli-'));
  const dbPath = join(dir, 'data', 'site.db');
  const configFile = join(dir, 'site.yaml');
  writeFileSync(
    configFile,
    [
      'site: { name: "Larkfield Smallholding" }',
      'decoders: [{ id: house, port: /dev/pairwatch-house }]',
      'loops: [{ id: hen-house, name: "Hen house", decoder: house, input: 1 }]',
      `storage: { path: ${JSON.stringify(dbPath)} }`,
      '',
    ].join('\n'),
  );
  return { dir, configFile, dbPath, cleanup: () => rmSync(dir, { recursive: true, force: true }) };
}

export async function run(command: CliCommand, argv: string[], stdinText = ''): Promise<{ code: number; stdout: string; stderr: string }> {
  const stdout = new PassThrough();
  const stderr = new PassThrough();
  let out = '';
  let err = '';
  stdout.on('data', (c: Buffer) => (out += c.toString()));
  stderr.on('data', (c: Buffer) => (err += c.toString()));
  const io: CliIo = { stdout, stderr, stdin: Readable.from([Buffer.from(stdinText)]), env: {} };
  const code = await command(argv, io);
  return { code, stdout: out, stderr: err };
}

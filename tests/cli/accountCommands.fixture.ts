import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { CliCommand } from '../../src/cli/cliTypes.js';
import { captureCliIo } from '../helpers/captureCliIo.js';
import { makeTempDir } from '../helpers/tempDir.js';

/** A temp site (config file + database path) and a way to run a CLI command with captured output. */
export function makeSite(): { dir: string; configFile: string; dbPath: string; cleanup(): void } {
  const { dir, cleanup } = makeTempDir('pairwatch-cli-');
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
  return { dir, configFile, dbPath, cleanup };
}

export async function run(command: CliCommand, argv: string[], stdinText = ''): Promise<{ code: number; stdout: string; stderr: string }> {
  const captured = captureCliIo({ stdin: stdinText });
  const code = await command(argv, captured.io);
  return { code, stdout: captured.out(), stderr: captured.err() };
}

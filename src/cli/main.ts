#!/usr/bin/env node
import { realpathSync } from 'node:fs';
import { createRequire } from 'node:module';
import { fileURLToPath } from 'node:url';
import type { CliCommand, CliIo } from './cliTypes.js';
import { plainUsageMessage } from './defineCommand.js';

/**
 * The `pairwatch` command. Each subcommand lives in its own module and is loaded only when used,
 * so `pairwatch check-config` does not pay for fastify or serialport.
 *
 * Adding a command: write `src/cli/<name>Command.ts` exporting `defineCommand({ name, usage, run })`
 * (its usage text starts `usage: pairwatch <name>`; `subcommands` gives each subcommand its own), then
 * add one line below: `name: { summary, load }`. `--help`, `help <name>`, unknown options and the
 * general help's "commands:" list (two spaces, the name, its summary) then work without more code.
 */
const COMMANDS: Record<string, { summary: string; load: () => Promise<CliCommand> }> = {
  run: { summary: 'run the monitor (--config FILE)', load: async () => (await import('./runCommand.js')).runCommand },
  demo: { summary: 'run the demo site with a simulated decoder', load: async () => (await import('./demoCommand.js')).demoCommand },
  'check-config': { summary: 'validate a site config file: check-config FILE', load: async () => (await import('./checkConfigCommand.js')).checkConfigCommand },
  ports: { summary: 'list serial ports and the udev line for each adapter', load: async () => (await import('./portsCommand.js')).portsCommand },
  watch: { summary: 'commissioning: live bands, pulse period and verdict per input: watch PORT', load: async () => (await import('./watchCommand.js')).watchCommand },
  sim: { summary: 'simulated decoder: sim SCENARIO [--listen tcp://127.0.0.1:PORT]', load: async () => (await import('./simCommand.js')).simCommand },
  'mail-test': { summary: 'send a test mail: mail-test ADDRESS --config FILE', load: async () => (await import('./mailTestCommand.js')).mailTestCommand },
  user: { summary: 'people who sign in: user add, user passwd, user role, user list, user remove', load: async () => (await import('./userCommand.js')).userCommand },
  token: { summary: 'API tokens: token create, token revoke, token list', load: async () => (await import('./tokenCommand.js')).tokenCommand },
  doctor: { summary: 'check config, decoder ports, mail, web port, disk and clock', load: async () => (await import('./doctorCommand.js')).doctorCommand },
  backup: { summary: 'online backup of the database: backup FILE [--force]', load: async () => (await import('./backupCommand.js')).backupCommand },
  conformance: { summary: 'check a decoder against protocol v1, rule by rule: conformance PORT [--seconds N]', load: async () => (await import('./conformanceCommand.js')).conformanceCommand },
  estate: { summary: 'estate board for many sites over MQTT: estate --config FILE', load: async () => (await import('./estateCommand.js')).estateCommand },
  restore: { summary: 'restore the database from a backup (service stopped): restore FILE', load: async () => (await import('./restoreCommand.js')).restoreCommand },
};

export const COMMAND_TABLE = COMMANDS;

function usage(): string {
  const width = Math.max(...Object.keys(COMMANDS).map((n) => n.length));
  const lines = Object.entries(COMMANDS).map(([name, c]) => `  ${name.padEnd(width)}  ${c.summary}`);
  return (
    `usage: pairwatch <command> [options]\n\ncommands:\n${lines.join('\n')}\n\n` +
    'Every command that needs a site takes --config FILE (default config/site.yaml).\n' +
    'pairwatch <command> --help, or pairwatch help <command>, shows the command\'s own usage.\n' +
    'From a checkout (after npm ci) run it as: npx pairwatch <command>\n'
  );
}

export async function main(argv: string[], io: CliIo): Promise<number> {
  const [first, ...afterFirst] = argv;
  if (!first || ((first === 'help' || first === '--help' || first === '-h') && afterFirst.length === 0)) {
    io.stdout.write(usage());
    return first ? 0 : 2;
  }
  if (first === '--version' || first === 'version') {
    const pkg = createRequire(import.meta.url)('../../../package.json') as { version: string };
    io.stdout.write(`pairwatch ${pkg.version}\n`);
    return 0;
  }
  // `pairwatch help user add` is `pairwatch user add --help`.
  const helpWanted = first === 'help' || first === '--help' || first === '-h';
  const name = helpWanted ? afterFirst[0]! : first;
  const rest = helpWanted ? [...afterFirst.slice(1), '--help'] : afterFirst;
  const command = COMMANDS[name];
  if (!command) {
    io.stderr.write(`pairwatch: unknown command "${name}"\n\n${usage()}`);
    return 2;
  }
  try {
    return await (await command.load())(rest, io);
  } catch (err) {
    // Usage mistakes and anything unforeseen end as one plain line, not a stack trace.
    const plain = plainUsageMessage(err);
    if (plain !== null) {
      io.stderr.write(`pairwatch ${name}: ${plain}\n`);
      return 2;
    }
    const code = (err as { code?: string }).code;
    const message = err instanceof Error ? err.message : String(err);
    io.stderr.write(`pairwatch ${name}: failed: ${message}${code ? ` (${code})` : ''}\n`);
    if (io.env.PAIRWATCH_DEBUG) io.stderr.write(`${(err as Error).stack ?? ''}\n`);
    return 1;
  }
}

function invokedDirectly(): boolean {
  const script = process.argv[1];
  if (!script) return false;
  try {
    // npx and npm link run us through a symlink in node_modules/.bin.
    return realpathSync(script) === fileURLToPath(import.meta.url);
  } catch {
    return false;
  }
}

if (invokedDirectly()) {
  const io: CliIo = { stdout: process.stdout, stderr: process.stderr, stdin: process.stdin, env: process.env };
  main(process.argv.slice(2), io).then(
    (code) => {
      process.exitCode = code;
    },
    (err: unknown) => {
      process.stderr.write(`pairwatch: ${(err as Error).message}\n`);
      process.exitCode = 1;
    },
  );
}

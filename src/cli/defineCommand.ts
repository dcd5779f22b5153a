import type { CliCommand, CliIo } from './cliTypes.js';

/**
 * The shared shape of every command's usage handling, so each answers the same way:
 * `--help` / `-h` (and `pairwatch help CMD [SUB]`) print that command's — or subcommand's — usage to
 * stdout, exit 0; a usage mistake (an unknown option, a missing argument) prints one plain line and the
 * usage to stderr, exit 2. A command throws `UsageError` for its own usage mistakes; node's parseArgs
 * errors are turned into plain lines here.
 */
export class UsageError extends Error {
  override readonly name = 'UsageError';
}

export interface CommandSpec {
  /** As typed after `pairwatch`: `backup`, `check-config`. */
  name: string;
  /** The whole usage text, starting `usage: pairwatch NAME`. */
  usage: string;
  /** Subcommand → its own usage text (e.g. `user add`). */
  subcommands?: Readonly<Record<string, string>>;
  run: CliCommand;
}

export type DefinedCommand = CliCommand & { readonly spec: CommandSpec };

/** parseArgs' messages name JavaScript ("To specify a positional argument…"); say it plainly. */
export function plainUsageMessage(err: unknown): string | null {
  if (err instanceof UsageError) return err.message;
  const code = (err as { code?: unknown })?.code;
  if (typeof code !== 'string' || !code.startsWith('ERR_PARSE_ARGS')) return null;
  const message = (err as Error).message;
  const option = /'(-[^' ]+)/.exec(message)?.[1];
  switch (code) {
    case 'ERR_PARSE_ARGS_UNKNOWN_OPTION':
      return `unknown option ${option ?? message}`;
    case 'ERR_PARSE_ARGS_INVALID_OPTION_VALUE':
      return option ? `option ${option} needs a value` : message.split('.')[0]!;
    case 'ERR_PARSE_ARGS_UNEXPECTED_POSITIONAL':
      return `unexpected argument ${/'([^']*)'/.exec(message)?.[1] ?? ''}`.trim();
    default:
      return message.split('. ')[0]!;
  }
}

function wantsHelp(argv: readonly string[]): boolean {
  for (const arg of argv) {
    if (arg === '--') return false;
    if (arg === '--help' || arg === '-h') return true;
  }
  return false;
}

export function defineCommand(spec: CommandSpec): DefinedCommand {
  const usageFor = (argv: readonly string[]) => {
    const sub = argv[0] !== undefined ? spec.subcommands?.[argv[0]] : undefined;
    return { text: sub ?? spec.usage, label: sub ? `${spec.name} ${argv[0]}` : spec.name };
  };
  const command = async (argv: string[], io: CliIo) => {
    const usage = usageFor(argv);
    if (wantsHelp(argv)) {
      io.stdout.write(usage.text.endsWith('\n') ? usage.text : `${usage.text}\n`);
      return 0;
    }
    try {
      return await spec.run(argv, io);
    } catch (err) {
      const plain = plainUsageMessage(err);
      if (plain === null) throw err;
      io.stderr.write(`pairwatch ${usage.label}: ${plain}\n\n${usage.text.endsWith('\n') ? usage.text : `${usage.text}\n`}`);
      return 2;
    }
  };
  return Object.assign(command, { spec });
}

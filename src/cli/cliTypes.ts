/**
 * Every CLI command is a module `src/cli/<name>Command.ts` exporting one function of this shape.
 * It parses its own argv (node:util parseArgs), writes to the given streams and returns the exit code:
 * 0 ok, 1 the check or action failed, 2 bad usage or bad config. It never lets a stack trace reach the user.
 */
export interface CliIo {
  stdout: NodeJS.WritableStream;
  stderr: NodeJS.WritableStream;
  stdin: NodeJS.ReadableStream;
  env: NodeJS.ProcessEnv;
}

export type CliCommand = (argv: string[], io: CliIo) => Promise<number>;

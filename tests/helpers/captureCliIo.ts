import { PassThrough, Readable } from 'node:stream';
import type { CliIo } from '../../src/cli/cliTypes.js';

export interface CapturedCliIo {
  io: CliIo;
  out(): string;
  err(): string;
  /** stdout and stderr together, in the order they were written: what a person at the terminal sees. */
  all(): string;
}

export interface CaptureCliIoOptions {
  env?: NodeJS.ProcessEnv;
  /** What the command reads from stdin (then ended); without it stdin stays open and empty. */
  stdin?: string;
}

/** A CLI command's streams, captured, so a test can run the command in-process and read what it printed. */
export function captureCliIo(options: CaptureCliIoOptions = {}): CapturedCliIo {
  const stdout = new PassThrough();
  const stderr = new PassThrough();
  let out = '';
  let err = '';
  let all = '';
  stdout.on('data', (chunk: Buffer) => {
    out += chunk.toString();
    all += chunk.toString();
  });
  stderr.on('data', (chunk: Buffer) => {
    err += chunk.toString();
    all += chunk.toString();
  });
  const stdin = options.stdin === undefined ? new PassThrough() : Readable.from([Buffer.from(options.stdin)]);
  return { io: { stdout, stderr, stdin, env: options.env ?? {} }, out: () => out, err: () => err, all: () => all };
}

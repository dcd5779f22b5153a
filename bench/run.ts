import { spawn } from 'node:child_process';
import { mkdirSync, writeFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { parseArgs } from 'node:util';
import { findPackageRoot } from '../src/store/openDatabase.js';
import { BENCH_NAMES, type BenchName, type BenchResult } from './benchTypes.js';
import { SCENARIOS } from './scenarios.js';
import { consoleTable, markdownTable, targetSummary } from './support/formatResults.js';
import { describeMachine, machineLine, type MachineInfo } from './support/machine.js';

/**
 * `npm run bench` (all scenarios; writes bench/results/latest.md), `npm run bench:smoke` (short runs
 * that never fail on a target), `--only NAME`, `--out FILE`. Each scenario runs in its own child
 * process, so one scenario's memory, JIT state and leftover handles never colour the next one's figures.
 */

const RESULT_MARK = 'PWBENCH_RESULT ';
const USAGE = `usage: node dist/bench/run.js [--smoke] [--only ${BENCH_NAMES.join('|')}] [--out FILE]`;

async function main(argv: string[]): Promise<number> {
  let args;
  try {
    args = parseArgs({
      args: argv,
      options: {
        smoke: { type: 'boolean', default: false },
        only: { type: 'string' },
        out: { type: 'string' },
        child: { type: 'string' },
        help: { type: 'boolean', default: false },
      },
      strict: true,
      allowPositionals: false,
    }).values;
  } catch (err) {
    process.stderr.write(`${(err as Error).message}\n${USAGE}\n`);
    return 2;
  }
  if (args.help) {
    process.stdout.write(`${USAGE}\n`);
    return 0;
  }
  const smoke = args.smoke === true;
  if (args.child !== undefined) return runChild(args.child, smoke);

  let names: BenchName[] = [...BENCH_NAMES];
  if (args.only !== undefined) {
    if (!isBenchName(args.only)) {
      process.stderr.write(`--only: "${args.only}" is not a benchmark; choose one of ${BENCH_NAMES.join(', ')}\n`);
      return 2;
    }
    names = [args.only];
  }

  const machine = describeMachine();
  const startedAt = new Date();
  process.stdout.write(`pairwatch benchmarks (${smoke ? 'smoke — figures are not meaningful, targets never fail the run' : 'full'})\n`);
  process.stdout.write(`machine: ${machineLine(machine)}\n\n`);

  const results: BenchResult[] = [];
  const failures: string[] = [];
  for (const name of names) {
    process.stdout.write(`running ${name}…\n`);
    const outcome = await runInChild(name, smoke);
    if ('error' in outcome) {
      failures.push(`${name}: ${outcome.error}`);
      process.stdout.write(`  ${name} FAILED: ${outcome.error}\n\n`);
      continue;
    }
    results.push(outcome.result);
    process.stdout.write(`\n${outcome.result.title}  (${(outcome.seconds).toFixed(1)} s)\n${consoleTable(outcome.result)}\n`);
    for (const note of outcome.result.notes) process.stdout.write(`  · ${note}\n`);
    process.stdout.write('\n');
  }

  if (results.length > 0) {
    process.stdout.write('targets:\n');
    for (const line of targetSummary(results)) process.stdout.write(`  ${line}\n`);
  }

  // A smoke run or a partial run must not overwrite the committed full results.
  const out = args.out ?? (!smoke && args.only === undefined ? join(findPackageRoot(), 'bench', 'results', 'latest.md') : undefined);
  if (out !== undefined) {
    const file = resolve(out);
    mkdirSync(dirname(file), { recursive: true });
    writeFileSync(file, markdownReport(results, failures, machine, startedAt, smoke, args.only ?? null));
    process.stdout.write(`\nresults written to ${file}\n`);
  }
  if (failures.length > 0) {
    process.stderr.write(`\n${failures.length} benchmark(s) failed:\n${failures.map((f) => `  ${f}`).join('\n')}\n`);
    return 1;
  }
  return 0;
}

function isBenchName(name: string): name is BenchName {
  return (BENCH_NAMES as readonly string[]).includes(name);
}

/** Child mode: run one scenario and print its result as one marked JSON line. */
async function runChild(name: string, smoke: boolean): Promise<number> {
  if (!isBenchName(name)) {
    process.stderr.write(`--child: "${name}" is not a benchmark\n`);
    return 2;
  }
  try {
    const scenario = await SCENARIOS[name]();
    const result = await scenario({ smoke });
    process.stdout.write(`${RESULT_MARK}${JSON.stringify(result)}\n`);
    return 0;
  } catch (err) {
    const e = err as Error & { code?: string };
    process.stderr.write(`${e.code ? `${e.code}: ` : ''}${e.message}\n`);
    return 1;
  }
}

function runInChild(name: BenchName, smoke: boolean): Promise<{ result: BenchResult; seconds: number } | { error: string }> {
  const script = fileURLToPath(import.meta.url);
  const started = Date.now();
  return new Promise((done) => {
    const child = spawn(process.execPath, [script, '--child', name, ...(smoke ? ['--smoke'] : [])], { stdio: ['ignore', 'pipe', 'pipe'] });
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (c: Buffer) => (stdout += c.toString()));
    child.stderr.on('data', (c: Buffer) => (stderr += c.toString()));
    child.on('error', (err) => done({ error: `could not start: ${err.message}` }));
    child.on('close', (code, signal) => {
      const marked = stdout.split('\n').find((l) => l.startsWith(RESULT_MARK));
      if (code === 0 && marked) {
        try {
          return done({ result: JSON.parse(marked.slice(RESULT_MARK.length)) as BenchResult, seconds: (Date.now() - started) / 1000 });
        } catch {
          return done({ error: 'printed a result that is not JSON' });
        }
      }
      const reason = stderr.trim().split('\n').filter((l) => !/Deprecation|--trace-warnings/.test(l)).slice(-3).join(' / ');
      done({ error: `${signal ? `killed by ${signal}` : `exit code ${code}`}${reason ? `: ${reason}` : ''}` });
    });
  });
}

function markdownReport(results: readonly BenchResult[], failures: readonly string[], machine: MachineInfo, startedAt: Date, smoke: boolean, only: string | null): string {
  const kind = smoke ? 'smoke run: figures not meaningful' : only !== null ? `one scenario, \`npm run bench -- --only ${only}\`` : 'full run, `npm run bench`';
  const parts = [
    '# pairwatch benchmark results',
    '',
    `- Run: ${startedAt.toISOString().replace(/\.\d{3}Z$/, 'Z')} (${kind})`,
    `- Machine: ${machineLine(machine)}`,
    '- Each figure is measured in the same run as its reference; ratios travel between machines better than absolute numbers.',
    '',
    '## Targets',
    '',
    ...targetSummary(results).map((l) => `- ${l}`),
    ...failures.map((f) => `- FAILED to run — ${f}`),
  ];
  for (const result of results) {
    parts.push('', `## ${result.title}`, '', markdownTable(result), '', ...result.notes.map((n) => `- ${n}`));
  }
  return `${parts.join('\n')}\n`;
}

main(process.argv.slice(2)).then(
  (code) => {
    process.exitCode = code;
  },
  (err: unknown) => {
    process.stderr.write(`benchmark runner failed: ${(err as Error).message}\n`);
    process.exitCode = 1;
  },
);

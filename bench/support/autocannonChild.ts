import { spawn } from 'node:child_process';
import { createRequire } from 'node:module';
import { BenchError } from './benchError.js';

/** The parts of autocannon's `--json` result the API bench reads. */
export interface LoadResult {
  requestsPerS: number;
  p50Ms: number;
  p99Ms: number;
  total: number;
  non2xx: number;
  errors: number;
}

interface AutocannonJson {
  requests: { average: number; total: number };
  latency: { p50: number; p99: number };
  non2xx: number;
  errors: number;
}

const require = createRequire(import.meta.url);

/**
 * Load from a second process: the registry's autocannon CLI in a child `node`, so the load generator
 * does not share the event loop of the server it measures.
 */
export function runAutocannon(url: string, options: { connections: number; seconds: number; headers?: Record<string, string> }): Promise<LoadResult> {
  const cli = require.resolve('autocannon/autocannon.js');
  const args = [cli, '--json', '-c', String(options.connections), '-d', String(options.seconds)];
  for (const [name, value] of Object.entries(options.headers ?? {})) args.push('-H', `${name}: ${value}`);
  args.push(url);
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, args, { stdio: ['ignore', 'pipe', 'pipe'] });
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (c: Buffer) => (stdout += c.toString()));
    child.stderr.on('data', (c: Buffer) => (stderr += c.toString()));
    child.on('error', (err) => reject(new BenchError('PW_BENCH_LOAD', `cannot start autocannon: ${err.message}`)));
    child.on('close', (code) => {
      if (code !== 0) return reject(new BenchError('PW_BENCH_LOAD', `autocannon exited with ${code}: ${stderr.trim().slice(0, 400)}`));
      try {
        const result = JSON.parse(stdout) as AutocannonJson;
        resolve({
          requestsPerS: result.requests.average,
          p50Ms: result.latency.p50,
          p99Ms: result.latency.p99,
          total: result.requests.total,
          non2xx: result.non2xx,
          errors: result.errors,
        });
      } catch {
        reject(new BenchError('PW_BENCH_LOAD', `autocannon printed no JSON result: ${stdout.slice(0, 200)}`));
      }
    });
  });
}

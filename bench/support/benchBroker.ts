import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, writeFileSync } from 'node:fs';
import { connect } from 'node:net';
import { userInfo } from 'node:os';
import { join } from 'node:path';
import { BenchError } from './benchError.js';

const MOSQUITTO = '/usr/sbin/mosquitto';

/** Debian's Mosquitto on a loopback port, anonymous and without persistence: the bench measures the path, not the ACL. */
export async function startBenchBroker(dir: string, port: number): Promise<{ url: string; stop(): Promise<void> }> {
  if (!existsSync(MOSQUITTO)) throw new BenchError('PW_BENCH_NO_MOSQUITTO', `${MOSQUITTO} is missing: apt-get install mosquitto (.ci/run installs it)`);
  const conf = join(dir, 'mosquitto.conf');
  writeFileSync(conf, [`listener ${port} 127.0.0.1`, 'allow_anonymous true', 'persistence false', 'log_dest none', 'max_queued_messages 100000', ...(process.getuid?.() === 0 ? [`user ${userInfo().username}`] : []), ''].join('\n'));
  const child: ChildProcess = spawn(MOSQUITTO, ['-c', conf], { stdio: 'ignore' });
  const deadline = Date.now() + 10_000;
  for (;;) {
    const up = await new Promise<boolean>((resolve) => {
      const s = connect({ host: '127.0.0.1', port });
      s.once('connect', () => (s.destroy(), resolve(true)));
      s.once('error', () => resolve(false));
    });
    if (up) break;
    if (child.exitCode !== null || Date.now() > deadline) throw new BenchError('PW_BENCH_BROKER_DOWN', `mosquitto did not start on 127.0.0.1:${port}`);
    await new Promise((r) => setTimeout(r, 20));
  }
  return {
    url: `mqtt://127.0.0.1:${port}`,
    stop: () =>
      new Promise<void>((resolve) => {
        if (child.exitCode !== null) return resolve();
        child.once('exit', () => resolve());
        child.kill('SIGTERM');
      }),
  };
}

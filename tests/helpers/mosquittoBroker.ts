import { execFileSync, spawn, type ChildProcess } from 'node:child_process';
import { existsSync, writeFileSync } from 'node:fs';
import { connect } from 'node:net';
import { userInfo } from 'node:os';
import { join } from 'node:path';
import { freePort } from './freePort.js';
import { stopChild } from './stopChild.js';

const MOSQUITTO = '/usr/sbin/mosquitto';
const MOSQUITTO_PASSWD = '/usr/bin/mosquitto_passwd';

/**
 * A real Mosquitto (Debian's `mosquitto`) on a loopback port, with a throwaway config: no anonymous
 * access, a password file made by mosquitto_passwd, an ACL that keeps each site (user = site id) to
 * its own subtree and lets the estate user read everything and write commands; persistence off.
 * `stop()` and `start()` again keep the port, for outage tests.
 */
export interface MosquittoBroker {
  readonly port: number;
  readonly url: string;
  readonly aclFile: string;
  start(): Promise<void>;
  stop(): Promise<void>;
  close(): Promise<void>;
}

export const ESTATE_USER = { name: 'estate', pass: 'estate-pass' } as const;
export const sitePassword = (siteId: string) => `${siteId}-pass`;

/** The ACL the README shows, with the test's prefix. */
export function brokerAcl(prefix: string): string {
  return [
    `user ${ESTATE_USER.name}`,
    `topic read ${prefix}/#`,
    `topic write ${prefix}/+/commands`,
    '',
    '# every other user is a site, named by its site_id',
    `pattern write ${prefix}/%u/#`,
    `pattern read ${prefix}/%u/commands`,
    '',
  ].join('\n');
}

export async function startMosquitto(
  dir: string,
  siteIds: readonly string[],
  options: { prefix?: string; /** Keep sessions across stop/start (saved to the temp dir on a clean stop). */ persistent?: boolean } = {},
): Promise<MosquittoBroker> {
  const prefix = options.prefix ?? 'pairwatch';
  if (!existsSync(MOSQUITTO) || !existsSync(MOSQUITTO_PASSWD)) {
    throw new Error(`${MOSQUITTO} is missing: install Debian's mosquitto and mosquitto-clients (apt-get install mosquitto mosquitto-clients); .ci/run installs them`);
  }
  const port = await freePort();
  const passwordFile = join(dir, 'passwd');
  writeFileSync(passwordFile, '', { mode: 0o600 });
  for (const [user, pass] of [[ESTATE_USER.name, ESTATE_USER.pass], ...siteIds.map((id) => [id, sitePassword(id)])] as const) {
    execFileSync(MOSQUITTO_PASSWD, ['-b', passwordFile, user, pass], { stdio: 'ignore' });
  }
  const aclFile = join(dir, 'acl');
  writeFileSync(aclFile, brokerAcl(prefix), { mode: 0o600 });
  const configFile = join(dir, 'mosquitto.conf');
  writeFileSync(
    configFile,
    [`listener ${port} 127.0.0.1`, 'allow_anonymous false', `password_file ${passwordFile}`, `acl_file ${aclFile}`, ...(options.persistent ? ['persistence true', `persistence_location ${dir}/`] : ['persistence false']), 'log_dest stderr', 'log_type error',
      // Run as root (CI), mosquitto would drop to its own user and could not read the temp files.
      ...(process.getuid?.() === 0 ? [`user ${userInfo().username}`] : []), ''].join('\n'),
  );

  let child: ChildProcess | null = null;
  let stderr = '';
  const start = async () => {
    stderr = '';
    child = spawn(MOSQUITTO, ['-c', configFile], { stdio: ['ignore', 'ignore', 'pipe'] });
    child.stderr?.on('data', (d: Buffer) => (stderr += d.toString()));
    const deadline = Date.now() + 10_000;
    while (!(await canConnect(port))) {
      if (child.exitCode !== null || Date.now() > deadline) throw new Error(`mosquitto did not start on 127.0.0.1:${port}: ${stderr.trim() || 'no output'}`);
      await new Promise((r) => setTimeout(r, 20));
    }
  };
  const stop = async () => {
    // With persistence, a clean stop (SIGTERM) is what writes the session store.
    if (child) await stopChild(child, options.persistent ? 'SIGTERM' : 'SIGKILL');
    child = null;
  };
  await start();
  return { port, url: `mqtt://127.0.0.1:${port}`, aclFile, start, stop, close: stop };
}

function canConnect(port: number): Promise<boolean> {
  return new Promise((resolve) => {
    const socket = connect({ host: '127.0.0.1', port });
    socket.once('connect', () => {
      socket.destroy();
      resolve(true);
    });
    socket.once('error', () => resolve(false));
  });
}

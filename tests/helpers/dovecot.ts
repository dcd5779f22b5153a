import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { chmodSync, mkdirSync, writeFileSync, existsSync, readFileSync } from 'node:fs';
import { connect } from 'node:net';
import { join } from 'node:path';
import { freePort } from './freePort.js';
import { makeTempDir, type TempDir } from './tempDir.js';

/**
 * A real Dovecot IMAP server (Debian's dovecot-imapd) on 127.0.0.1 for one test file: a throwaway
 * config, passwd-file login, maildir in a temp folder, no TLS, foreground (-F), logging to a file.
 * Run as root, the mail is owned by `nobody`; the login processes run as the existing `dovenull`.
 */
export interface DovecotServer {
  readonly host: '127.0.0.1';
  port: number;
  readonly user: string;
  readonly pass: string;
  readonly dir: string;
  readonly log: () => string;
  stop(): Promise<void>;
  /** Starts again on the same port and mail folder (after stop, for "IMAP down and back up"). */
  restart(): Promise<void>;
  close(): Promise<void>;
}

export const DOVECOT_BIN = '/usr/sbin/dovecot';
export const dovecotAvailable = (): boolean => existsSync(DOVECOT_BIN) && process.getuid?.() === 0;

function waitForPort(port: number, timeoutMs: number): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  return new Promise((resolve, reject) => {
    const attempt = () => {
      const socket = connect(port, '127.0.0.1');
      socket.once('data', () => {
        socket.destroy();
        resolve();
      });
      socket.once('error', () => {
        socket.destroy();
        if (Date.now() > deadline) reject(new Error(`dovecot did not listen on ${port}`));
        else setTimeout(attempt, 50);
      });
    };
    attempt();
  });
}

export async function startDovecot(options: { user?: string; pass?: string } = {}): Promise<DovecotServer> {
  const tmp: TempDir = makeTempDir('pw-dovecot-');
  const dir = tmp.dir;
  const user = options.user ?? 'office@farm.test';
  const pass = options.pass ?? 'app-password-1';
  const port = await freePort();
  for (const sub of ['run', 'state', 'mail']) mkdirSync(join(dir, sub), { recursive: true });
  chmodSync(dir, 0o755);
  spawnSync('chown', ['-R', 'nobody:nogroup', join(dir, 'mail')]);
  writeFileSync(join(dir, 'passwd'), `${user}:{PLAIN}${pass}:65534:65534::${join(dir, 'mail', user)}\n`);
  const conf = join(dir, 'dovecot.conf');
  writeFileSync(
    conf,
    `protocols = imap
listen = 127.0.0.1
base_dir = ${join(dir, 'run')}
state_dir = ${join(dir, 'state')}
log_path = ${join(dir, 'dovecot.log')}
default_internal_user = dovenull
default_login_user = dovenull
ssl = no
disable_plaintext_auth = no
auth_mechanisms = plain login
passdb {
  driver = passwd-file
  args = ${join(dir, 'passwd')}
}
userdb {
  driver = passwd-file
  args = ${join(dir, 'passwd')}
}
mail_location = maildir:${join(dir, 'mail')}/%u
first_valid_uid = 1
service imap-login {
  inet_listener imap {
    address = 127.0.0.1
    port = ${port}
  }
  inet_listener imaps {
    port = 0
  }
}
service stats {
  unix_listener stats-writer {
    mode = 0666
  }
}
`,
  );
  let child: ChildProcess | null = null;
  const start = async () => {
    child = spawn(DOVECOT_BIN, ['-c', conf, '-F'], { stdio: ['ignore', 'ignore', 'pipe'] });
    let stderr = '';
    child.stderr?.on('data', (d: Buffer) => (stderr += d.toString()));
    const exited = new Promise<never>((_, reject) => child!.once('exit', (code) => reject(new Error(`dovecot exited (${code}): ${stderr}`))));
    await Promise.race([waitForPort(port, 10_000), exited]);
    exited.catch(() => undefined);
  };
  const stop = async () => {
    const c = child;
    child = null;
    if (!c || c.exitCode !== null) return;
    await new Promise<void>((resolve) => {
      c.once('exit', () => resolve());
      c.kill('SIGTERM');
    });
  };
  await start();
  return {
    host: '127.0.0.1',
    port,
    user,
    pass,
    dir,
    log: () => (existsSync(join(dir, 'dovecot.log')) ? readFileSync(join(dir, 'dovecot.log'), 'utf8') : ''),
    stop,
    restart: start,
    async close() {
      await stop();
      tmp.cleanup();
    },
  };
}

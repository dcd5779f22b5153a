import { execFileSync, spawn, type ChildProcess } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { existsSync, mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { createServer, type AddressInfo } from 'node:net';
import { tmpdir, userInfo } from 'node:os';
import { join } from 'node:path';
import { parseConfig } from '../config/loadConfig.js';
import { createLogger } from '../daemon/createLogger.js';
import { startMonitor, type Monitor } from '../daemon/startMonitor.js';
import { parseEstateConfig } from '../estate/loadEstateConfig.js';
import { startEstate } from '../estate/startEstate.js';
import { insertUser } from '../store/accountRepos.js';
import { hashPassword } from '../web/auth/passwordHash.js';
import type { CliIo } from './cliTypes.js';

/**
 * `pairwatch demo --estate`: a throwaway local Mosquitto on a loopback port, three invented simulated
 * sites publishing to it, and the estate board reading them. Everything lives in a temp folder that
 * is removed on Ctrl-C. Names, places and timelines are invented for the demo.
 */
const MOSQUITTO = '/usr/sbin/mosquitto';
const MOSQUITTO_PASSWD = '/usr/bin/mosquitto_passwd';

const SITES = [
  { id: 'ash-farm', name: 'Ash Farm', loops: ['Dairy', 'Grain store', 'Tractor shed'], events: '  - { at: 20s, action: freeze, input: 2 }' },
  { id: 'birch-yard', name: 'Birch Yard', loops: ['Boiler house', 'Tack room'], events: '  - { at: 35s, action: cut, input: 1 }\n  - { at: 80s, action: repair, input: 1 }' },
  { id: 'cedar-cottages', name: 'Cedar Cottages', loops: ['Cottage 1', 'Cottage 2', 'Cottage 3', 'Laundry'], events: '' },
] as const;

function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const probe = createServer();
    probe.once('error', reject);
    probe.listen(0, '127.0.0.1', () => {
      const { port } = probe.address() as AddressInfo;
      probe.close(() => resolve(port));
    });
  });
}

export async function runEstateDemo(io: CliIo, listen: string | undefined): Promise<number> {
  if (!existsSync(MOSQUITTO) || !existsSync(MOSQUITTO_PASSWD)) {
    io.stderr.write(`pairwatch demo --estate needs a local MQTT broker: install Mosquitto (Debian/Ubuntu: sudo apt-get install mosquitto mosquitto-clients), then run it again.\n`);
    return 1;
  }
  const dir = mkdtempSync(join(tmpdir(), 'pairwatch-estate-demo-'));
  const logger = createLogger({ level: process.env.PAIRWATCH_LOG_LEVEL ?? 'warn' });
  const port = await freePort();
  const passwords = new Map<string, string>([['estate', randomBytes(9).toString('base64url')], ...SITES.map((s) => [s.id, randomBytes(9).toString('base64url')] as const)]);
  const passwordFile = join(dir, 'passwd');
  writeFileSync(passwordFile, '', { mode: 0o600 });
  for (const [user, pass] of passwords) execFileSync(MOSQUITTO_PASSWD, ['-b', passwordFile, user, pass], { stdio: 'ignore' });
  writeFileSync(join(dir, 'acl'), 'user estate\ntopic read pairwatch/#\ntopic write pairwatch/+/commands\n\npattern write pairwatch/%u/#\npattern read pairwatch/%u/commands\n', { mode: 0o600 });
  writeFileSync(
    join(dir, 'mosquitto.conf'),
    [`listener ${port} 127.0.0.1`, 'allow_anonymous false', `password_file ${passwordFile}`, `acl_file ${join(dir, 'acl')}`, 'persistence false', 'log_dest none', ...(process.getuid?.() === 0 ? [`user ${userInfo().username}`] : []), ''].join('\n'),
  );
  const broker: ChildProcess = spawn(MOSQUITTO, ['-c', join(dir, 'mosquitto.conf')], { stdio: 'ignore' });
  const url = `mqtt://127.0.0.1:${port}`;
  const env = { ...io.env, ...Object.fromEntries([...passwords].map(([user, pass]) => [`PW_DEMO_${user.toUpperCase().replace(/-/g, '_')}`, pass])) };
  await new Promise((r) => setTimeout(r, 300));

  const monitors: Monitor[] = [];
  const siteUrls = new Map<string, string>();
  let estate: Awaited<ReturnType<typeof startEstate>> | null = null;
  const cleanUp = async () => {
    await estate?.stop().catch(() => undefined);
    for (const m of monitors) await m.stop('demo over', 2000).catch(() => undefined);
    broker.kill('SIGTERM');
    rmSync(dir, { recursive: true, force: true });
  };
  // One fresh password for the estate and the three sites, printed once: the demo ships no known password.
  const password = randomBytes(9).toString('base64url');
  const hashed = await hashPassword(password);
  try {
    for (const site of SITES) {
      const siteDir = join(dir, site.id);
      mkdirSync(siteDir);
      writeFileSync(
        join(siteDir, 'scenario.yaml'),
        `decoder: { inputs: ${site.loops.length}, tick_ms: 200 }\nseed: ${site.id.length * 7919}\nloops:\n${site.loops.map((_, i) => `  - { input: ${i + 1}, period_ms: 500, pulse_ms: 1, jitter: 0.04 }`).join('\n')}\nevents:${site.events ? `\n${site.events}` : ' []'}\n`,
      );
      const webPort = await freePort();
      const config = parseConfig(
        `site: { name: "${site.name}", timezone: "Europe/London" }
decoders: [{ id: main, port: "sim:scenario.yaml", inputs: ${site.loops.length} }]
loops:
${site.loops.map((name, i) => `  - { id: loop-${i + 1}, name: "${name}", decoder: main, input: ${i + 1} }`).join('\n')}
mail: { from: "${site.name} <monitor@${site.id}.example>", drop_folder: ${join(siteDir, 'mail')} }
storage: { path: ${join(siteDir, 'site.db')} }
web: { listen: "127.0.0.1:${webPort}", public_url: "http://127.0.0.1:${webPort}/" }
mqtt: { url: "${url}", username: ${site.id}, pass_env: PW_DEMO_${site.id.toUpperCase().replace(/-/g, '_')}, site_id: ${site.id}, keepalive: 10s }
`,
        `${site.id}.yaml`,
      );
      const monitor = await startMonitor({ config, configDir: siteDir, logger, env, announce: false });
      monitors.push(monitor);
      insertUser(monitor.store.db, { name: 'demo', role: 'operator', passwordHash: hashed.hash, passwordSalt: hashed.salt, createdAt: Date.now() });
      siteUrls.set(site.id, `http://127.0.0.1:${webPort}/`);
    }
    const estateConfig = parseEstateConfig(
      `estate: { name: "Hollow Lane estate (demo)", timezone: "Europe/London" }
mqtt: { url: "${url}", username: estate, pass_env: PW_DEMO_ESTATE, keepalive: 10s }
sites:
${SITES.map((s) => `  - { id: ${s.id}, name: "${s.name}", url: "${siteUrls.get(s.id)}" }`).join('\n')}
contacts: [{ id: steward, name: "Estate steward", email: "steward@hollow-lane.example" }]
mail: { from: "Estate board <estate@hollow-lane.example>", drop_folder: ${join(dir, 'estate-mail')} }
storage: { path: ${join(dir, 'estate.db')} }
web: { listen: "${listen ?? '127.0.0.1:8090'}" }
`,
      'estate.yaml',
    );
    estate = await startEstate({ config: estateConfig, logger, env });
    insertUser(estate.store.db, { name: 'demo', role: 'viewer', passwordHash: hashed.hash, passwordSalt: hashed.salt, createdAt: Date.now() });
    io.stdout.write(
      `\n  pairwatch demo --estate — three invented sites on a local Mosquitto (${url})\n` +
        `  Estate board: http://${estateConfig.web.listen}/   sign in as:  demo   password:  ${password}\n` +
        `  Watch: Ash Farm's grain store freezes at 0:20; Birch Yard's boiler-house cable is cut at 0:35 and repaired at 1:20.\n` +
        `  The sites' own pages (same name and password, as operator): ${[...siteUrls.values()].join('  ')}\n  Stop with Ctrl-C.\n\n`,
    );
  } catch (err) {
    io.stderr.write(`pairwatch demo --estate: cannot start: ${(err as Error).message}\n`);
    await cleanUp();
    return 1;
  }
  return new Promise<number>((resolveExit) => {
    const onSignal = () => void cleanUp().then(() => resolveExit(0));
    process.once('SIGTERM', onSignal);
    process.once('SIGINT', onSignal);
  });
}

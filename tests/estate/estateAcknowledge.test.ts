import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import mqtt from 'mqtt';
import pino from 'pino';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadConfig } from '../../src/config/loadConfig.js';
import { startMonitor, type Monitor } from '../../src/daemon/startMonitor.js';
import { loadEstateConfig } from '../../src/estate/loadEstateConfig.js';
import { renderEstateSiteDetail } from '../../src/estate/estatePages.js';
import { startEstate, type Estate } from '../../src/estate/startEstate.js';
import { insertApiToken } from '../../src/store/accountRepos.js';
import { newApiToken, sha256Hex } from '../../src/web/auth/secretToken.js';
import { ESTATE_USER, sitePassword, startMosquitto, type MosquittoBroker } from '../helpers/mosquittoBroker.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { waitFor } from '../helpers/waitFor.js';
import { siteEnv, writeSimSite } from '../mqtt/fixtures/simSite.js';
import { recordTopics } from '../mqtt/fixtures/topicRecorder.js';

/**
 * Acknowledging from the estate board: two real site monitors with `accept_commands: true` on a real
 * Mosquitto, one estate. The estate holds an operator's API token for farm-a and, as a misconfiguration,
 * only a viewer's token for farm-b. The site decides with its own rules and answers on the response
 * topic; the board relays the answer. Estate callers use estate API tokens (Bearer), one per role.
 */
let tmp: TempDir;
let broker: MosquittoBroker;
const sites = new Map<string, Monitor>();
let estate: Estate;
const estateOperator = newApiToken();
const estateViewer = newApiToken();

beforeAll(async () => {
  tmp = makeTempDir('pw-estate-ack-');
  broker = await startMosquitto(tmp.dir, ['farm-a', 'farm-b', 'farm-c']);
  const siteTokens: Record<string, string> = {};
  for (const [id, role] of [['farm-a', 'operator'], ['farm-b', 'viewer']] as const) {
    const { configFile, dir } = writeSimSite(tmp.dir, id, broker.url, { freezeAt: '1s', acceptCommands: true });
    const monitor = await startMonitor({ config: loadConfig(configFile), configDir: dir, logger: pino({ level: 'silent' }), listen: false, announce: false, env: siteEnv(id) });
    sites.set(id, monitor);
    siteTokens[id] = newApiToken();
    insertApiToken(monitor.store.db, { name: `estate-${role}`, role, tokenHash: sha256Hex(siteTokens[id]), createdAt: Date.now() });
  }
  const file = join(tmp.dir, 'estate.yaml');
  writeFileSync(
    file,
    `estate: { name: "Hollow Lane estate" }
mqtt: { url: ${broker.url}, username: ${ESTATE_USER.name}, pass_env: PW_ESTATE_PASS, client_id: estate-ack, command_timeout: 2s }
sites:
  - { id: farm-a, name: "Ash Farm", command_token_env: PW_TOKEN_FARM_A }
  - { id: farm-b, name: "Birch Yard", command_token_env: PW_TOKEN_FARM_B }
  - { id: farm-c, name: "Cedar Cottages", command_token_env: PW_TOKEN_FARM_C }
mail: { from: "estate <estate@example.org>", drop_folder: ${join(tmp.dir, 'estate-mail')} }
storage: { path: ${join(tmp.dir, 'estate.db')} }
web: { listen: "127.0.0.1:0" }
`,
  );
  estate = await startEstate({
    config: loadEstateConfig(file),
    logger: pino({ level: 'silent' }),
    env: { ...process.env, PW_ESTATE_PASS: ESTATE_USER.pass, PW_TOKEN_FARM_A: siteTokens['farm-a'], PW_TOKEN_FARM_B: siteTokens['farm-b'], PW_TOKEN_FARM_C: 'a-token-nobody-checks' },
    listen: false,
  });
  insertApiToken(estate.store.db, { name: 'olive', role: 'operator', tokenHash: sha256Hex(estateOperator), createdAt: Date.now() });
  insertApiToken(estate.store.db, { name: 'victor', role: 'viewer', tokenHash: sha256Hex(estateViewer), createdAt: Date.now() });
  for (const id of ['farm-a', 'farm-b']) {
    await waitFor(() => estate.book().sites[id]!.alarms.some((a) => a.condition === 'tripped' && a.state === 'unacknowledged'), 20_000, () => `${id}'s alarm on the estate`);
  }
}, 40_000);

afterAll(async () => {
  await estate?.stop();
  for (const m of sites.values()) await m.stop('test over', 2000);
  await broker?.close();
  tmp?.cleanup();
});

const alarmOf = (id: string) => estate.book().sites[id]!.alarms.find((a) => a.condition === 'tripped')!;
const ack = (siteId: string, alarmId: number, token: string) =>
  estate.web.inject({ method: 'POST', url: `/sites/${siteId}/alarms/${alarmId}/ack`, headers: { authorization: `Bearer ${token}`, 'content-type': 'application/x-www-form-urlencoded' }, payload: 'note=on+my+way' });

describe('acknowledging from the estate board over the command topic', () => {
  it('shows the acknowledge form to a signed-in operator, not to a viewer, and only where the board holds a token', () => {
    const session = (role: 'viewer' | 'operator') => ({ kind: 'session' as const, name: role, role, csrfToken: 'form-token', sessionIdHash: null });
    const action = `/sites/farm-a/alarms/${alarmOf('farm-a').id}/ack`;
    expect(renderEstateSiteDetail(estate.view(), 'farm-a', session('operator'))).toContain(`action="${action}"`);
    expect(renderEstateSiteDetail(estate.view(), 'farm-a', session('viewer'))).not.toContain(action);
    const noToken = { ...estate.view(), sites: estate.view().sites.map((s) => ({ ...s, canAct: false })) };
    expect(renderEstateSiteDetail(noToken, 'farm-a', session('operator'))).not.toContain(action);
  });

  it('refuses an estate viewer without asking the site', async () => {
    const { id } = alarmOf('farm-a');
    const res = await ack('farm-a', id, estateViewer);
    expect(res.statusCode).toBe(403);
    expect(res.body).toContain('this needs the operator role');
    expect(sites.get('farm-a')!.read.alarm(id)!.state).toBe('unacknowledged');
  });

  it('an estate operator acknowledges at the site; the site audits the token and the note names who asked', async () => {
    const { id } = alarmOf('farm-a');
    const res = await ack('farm-a', id, estateOperator);
    expect(res.statusCode).toBe(303);
    expect(res.headers.location).toBe(`/sites/farm-a?acked=${id}`);
    const atSite = sites.get('farm-a')!.read.alarm(id)!;
    expect(atSite.state).toBe('acknowledged');
    expect(atSite.ackedBy).toBe('token:estate-operator');
    expect(atSite.note).toBe('on my way (from the estate board, by token:olive)');
    // And the estate hears it back through the retained list, like any acknowledgement at the site.
    await waitFor(() => alarmOf('farm-a').state === 'acknowledged', 10_000, () => 'the acknowledged list on the estate');
  }, 20_000);

  it('relays the site\'s own refusal: farm-b was given only a viewer token', async () => {
    const { id } = alarmOf('farm-b');
    const res = await ack('farm-b', id, estateOperator);
    expect(res.statusCode).toBe(409);
    expect(res.body).toContain('Birch Yard did not acknowledge alarm');
    expect(res.body).toContain('PW_WEB_FORBIDDEN');
    expect(sites.get('farm-b')!.read.alarm(id)!.state).toBe('unacknowledged');
  }, 20_000);

  it('gives up after command_timeout when the site does not answer, and another site cannot answer for it', async () => {
    // farm-c runs no monitor, so nothing takes its commands; farm-b (logged in as itself) forges the answer.
    const tapped = await recordTopics(broker.url, 'pairwatch/farm-c/commands');
    const forger = await mqtt.connectAsync(broker.url, { protocolVersion: 5, clientId: 'farm-b-forger', username: 'farm-b', password: sitePassword('farm-b') });
    try {
      const asked = ack('farm-c', 5, estateOperator);
      await waitFor(() => tapped.messages.length === 1, 5000, () => 'the command to farm-c');
      const correlationData = tapped.messages[0]!.packet.properties!.correlationData!;
      await forger.publishAsync('pairwatch/farm-b/replies/estate-ack', JSON.stringify({ ok: true, at: new Date().toISOString(), action: 'acknowledge', alarmId: 5, code: null, message: null }), { qos: 1, properties: { correlationData } });
      const res = await asked;
      expect(res.statusCode).toBe(409);
      expect(res.body).toContain('PW_ESTATE_NO_ANSWER');
    } finally {
      await forger.endAsync(true);
      await tapped.close();
    }
  }, 20_000);
});

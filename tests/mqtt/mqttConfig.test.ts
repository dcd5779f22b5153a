import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { userCommand } from '../../src/cli/userCommand.js';
import { parseConfig } from '../../src/config/loadConfig.js';
import { captureCliIo } from '../helpers/captureCliIo.js';
import { configProblems } from '../helpers/configProblems.js';

const SITE = `site: { name: "Test Farm" }
decoders: [{ id: main, port: /dev/null }]
loops: [{ id: well-pit, name: "Well pit", decoder: main, input: 1 }]
storage: { path: /tmp/x.db }
`;

const problems = (text: string): string[] => configProblems(text, 'site.yaml');

describe('the mqtt key of the site config', () => {
  it('is optional, and fills the defaults the README states', () => {
    expect(parseConfig(SITE).mqtt).toBeUndefined();
    const config = parseConfig(`${SITE}mqtt: { url: "mqtts://broker.example.org:8883", site_id: ash-farm }\n`);
    expect(config.mqtt).toEqual({
      url: 'mqtts://broker.example.org:8883', site_id: 'ash-farm', prefix: 'pairwatch', keepalive: 30_000, event_expiry: 86_400_000,
      session_expiry: 3_600_000, unreachable_after: 60_000, accept_commands: false,
    });
  });

  it('names each bad field', () => {
    expect(problems(`${SITE}mqtt: { url: "tcp://broker:1883", site_id: ash-farm }\n`)).toEqual(['mqtt.url: must be mqtt://HOST:PORT or mqtts://HOST:PORT (TLS)']);
    expect(problems(`${SITE}mqtt: { url: "mqtt://broker:1883" }\n`)).toEqual(['mqtt.site_id: is required']);
    expect(problems(`${SITE}mqtt: { url: "mqtt://broker:1883", site_id: a, keepalive: 0s }\n`)).toEqual(['mqtt.keepalive: must be between 1s and 18h']);
    expect(problems(`${SITE}mqtt: { url: "mqtt://broker:1883", site_id: a, retain: true }\n`)).toEqual(['mqtt.retain: unknown key']);
  });
});

describe('user command on an estate config', () => {
  it('adds a user to the estate database', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'pw-estate-user-'));
    try {
      const file = join(dir, 'estate.yaml');
      writeFileSync(file, `estate: { name: "E" }\nmqtt: { url: "mqtt://127.0.0.1:1" }\nsites: [{ id: a }]\nstorage: { path: ${join(dir, 'estate.db')} }\n`);
      const add = captureCliIo({ stdin: 'a-long-enough-password\n' });
      expect(await userCommand(['add', 'steward', '--role', 'viewer', '--password-stdin', '--config', file], add.io)).toBe(0);
      const list = captureCliIo();
      expect(await userCommand(['list', '--config', file], list.io)).toBe(0);
      expect(list.out()).toContain('steward');
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});

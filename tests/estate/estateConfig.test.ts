import { describe, expect, it } from 'vitest';
import { ConfigError } from '../../src/config/configError.js';
import { parseEstateConfig } from '../../src/estate/loadEstateConfig.js';
import { ESTATE_USAGE, estateCommand } from '../../src/cli/estateCommand.js';
import { captureCliIo } from '../helpers/captureCliIo.js';

const GOOD = `estate: { name: "Hollow Lane" }
mqtt: { url: "mqtts://broker.example.org:8883", username: estate, pass_env: ESTATE_PASS }
sites: [{ id: ash-farm, name: "Ash Farm", url: "https://ash.example.org/" }]
storage: { path: /tmp/estate.db }
`;

function problems(text: string): string[] {
  try {
    parseEstateConfig(text, 'estate.yaml');
  } catch (err) {
    if (err instanceof ConfigError) return err.lines();
    throw err;
  }
  return [];
}

describe('estate config', () => {
  it('fills the defaults the README states', () => {
    const config = parseEstateConfig(GOOD);
    expect(config.mqtt).toMatchObject({ prefix: 'pairwatch', client_id: 'pairwatch-estate', keepalive: 30_000, session_expiry: 3_600_000 });
    expect(config.estate.timezone).toBe('UTC');
    expect(config.web.listen).toBe('127.0.0.1:8080');
  });

  it('names each bad field in plain words', () => {
    expect(problems(GOOD.replace('mqtts://broker.example.org:8883', 'http://broker'))).toEqual(['mqtt.url: must be mqtt://HOST:PORT or mqtts://HOST:PORT (TLS)']);
    expect(problems(GOOD.replace('username: estate', 'user: estate'))).toEqual(['mqtt.user: unknown key']);
    expect(problems(GOOD.replace(/sites: .*\n/, ''))).toEqual(['sites: is required']);
    expect(problems(GOOD.replace('sites: [', 'sites: [{ id: ash-farm }, '))).toEqual(['sites[1].id: "ash-farm" is already used by sites[0]']);
    expect(problems(`${GOOD}escalation: { default: { steps: [{ after: 0m, notify: [nobody] }] } }\n`)).toEqual(['escalation.default.steps[0].notify[0]: no contact has id "nobody"']);
  });

  it('estate --help prints the usage; a bad file exits 2 with one line per problem', async () => {
    const help = captureCliIo();
    expect(await estateCommand(['--help'], help.io)).toBe(0);
    expect(help.out()).toBe(ESTATE_USAGE);
    const bad = captureCliIo();
    expect(await estateCommand(['--config', '/nowhere/estate.yaml'], bad.io)).toBe(2);
    expect(bad.err()).toBe('/nowhere/estate.yaml: cannot read the config file: file not found\n');
  });
});

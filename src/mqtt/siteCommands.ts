import type BetterSqlite3 from 'better-sqlite3';
import { findLiveApiTokenByHash } from '../store/accountRepos.js';
import { tokenActor } from '../web/auth/accountName.js';
import { roleAllows } from '../web/auth/roles.js';
import { sha256Hex } from '../web/auth/secretToken.js';
import type { WebCommands } from '../web/webPorts.js';
import type { CommandPayload, ReplyPayload } from './sitePayloads.js';

/** MQTT 5 user property that may carry the API token instead of the payload. */
export const TOKEN_PROPERTY = 'token';

type Parsed = { ok: true; command: CommandPayload } | { ok: false; code: string; message: string; alarmId: number | null };

/** Reads a command payload; every refusal names the field, as the REST API does. */
export function parseCommand(payload: Buffer | string): Parsed {
  let body: unknown;
  try {
    body = JSON.parse(payload.toString());
  } catch {
    return { ok: false, code: 'PW_MQTT_BAD_JSON', message: 'body: is not JSON', alarmId: null };
  }
  if (typeof body !== 'object' || body === null || Array.isArray(body)) return { ok: false, code: 'PW_MQTT_BAD_INPUT', message: 'body: must be a JSON object', alarmId: null };
  const b = body as Record<string, unknown>;
  const alarmId = typeof b.alarmId === 'number' && Number.isInteger(b.alarmId) && b.alarmId >= 1 ? b.alarmId : null;
  const bad = (message: string): Parsed => ({ ok: false, code: 'PW_MQTT_BAD_INPUT', message, alarmId });
  const known = new Set(['action', 'alarmId', 'note', 'minutes', 'reason', 'token']);
  const unknown = Object.keys(b).find((k) => !known.has(k));
  if (unknown) return bad(`${unknown}: unknown field`);
  if (b.action !== 'acknowledge' && b.action !== 'shelve') return bad('action: must be "acknowledge" or "shelve"');
  if (alarmId === null) return bad('alarmId: must be a whole number of at least 1');
  for (const key of ['note', 'reason', 'token'] as const) {
    if (b[key] !== undefined && (typeof b[key] !== 'string' || b[key].length > (key === 'token' ? 200 : 500))) return bad(`${key}: must be text of at most ${key === 'token' ? 200 : 500} characters`);
  }
  if (b.action === 'shelve') {
    if (typeof b.minutes !== 'number' || !(b.minutes > 0)) return bad('minutes: must be a number above 0');
    if (typeof b.reason !== 'string' || b.reason.trim() === '') return bad('reason: is required to shelve');
  }
  return { ok: true, command: b as unknown as CommandPayload };
}

/**
 * Carries out one command with the REST API's rules: a live API token, role operator or above;
 * the action goes through the same web commands (so it is audited and notified like a click).
 */
export function runCommand(
  db: BetterSqlite3.Database,
  commands: Pick<WebCommands, 'acknowledge' | 'shelve'>,
  payload: Buffer | string,
  propertyToken: string | undefined,
  now: number,
): ReplyPayload {
  const at = new Date(now).toISOString();
  const parsed = parseCommand(payload);
  if (!parsed.ok) return { ok: false, at, action: null, alarmId: parsed.alarmId, code: parsed.code, message: parsed.message };
  const { command } = parsed;
  const reply = (code: string | null, message: string | null): ReplyPayload => ({ ok: code === null, at, action: command.action, alarmId: command.alarmId, code, message });
  const secret = propertyToken ?? command.token;
  if (!secret) return reply('PW_WEB_UNAUTHENTICATED', 'token: an API token is required (user property "token" or payload field "token")');
  const token = findLiveApiTokenByHash(db, sha256Hex(secret));
  if (!token) return reply('PW_WEB_BAD_TOKEN', 'token: unknown or revoked API token');
  if (!roleAllows(token.role, 'operator')) return reply('PW_WEB_FORBIDDEN', `token: role ${token.role} may not ${command.action}; operator or admin needed`);
  const actor = tokenActor(token.name);
  const result =
    command.action === 'acknowledge'
      ? commands.acknowledge(command.alarmId, actor, command.note ?? null)
      : commands.shelve(command.alarmId, actor, command.minutes!, command.reason!);
  return result.ok ? reply(null, null) : reply(result.code, result.message);
}

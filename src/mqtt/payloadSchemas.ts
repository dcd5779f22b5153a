import { ALARM_STATES } from '../model/alarmState.js';
import { CONDITIONS, PRIORITIES } from '../model/condition.js';
import { LOOP_STATES } from '../model/loopState.js';
import type { TopicKind } from './siteTopics.js';

/**
 * The published contract: one JSON Schema (draft-07) per payload on the topic layout. Consumers on
 * other systems validate against these; the tests validate real messages from a real broker with ajv.
 * Times are ISO 8601 UTC strings (RFC 3339 `date-time`), as in the REST API.
 */

const DRAFT = 'http://json-schema.org/draft-07/schema#';
const time = { type: 'string', format: 'date-time' } as const;
const timeOrNull = { anyOf: [time, { type: 'null' }] } as const;
const text = { type: 'string' } as const;
const textOrNull = { type: ['string', 'null'] } as const;
const count = { type: 'integer', minimum: 0 } as const;
const numberOrNull = { type: ['number', 'null'] } as const;

function object(properties: Record<string, unknown>, extra: Record<string, unknown> = {}) {
  return { type: 'object', additionalProperties: false, required: Object.keys(properties), properties, ...extra } as const;
}

const alarm = object({
  id: { type: 'integer', minimum: 1 },
  loopId: textOrNull,
  source: text,
  condition: { enum: [...CONDITIONS] },
  priority: { enum: [...PRIORITIES] },
  state: { enum: [...ALARM_STATES] },
  active: { type: 'boolean' },
  raisedAt: time,
  clearedAt: timeOrNull,
  ackedAt: timeOrNull,
  ackedBy: textOrNull,
  note: textOrNull,
  shelvedUntil: timeOrNull,
  shelveReason: textOrNull,
});

export const EVENT_KINDS = ['raised', 'acknowledged', 'shelved', 'unshelved', 'cleared', 'closed'] as const;
export type AlarmEventKind = (typeof EVENT_KINDS)[number];
export const WORST_STATES = ['alarm', 'trouble', 'system', 'normal'] as const;
export type WorstState = (typeof WORST_STATES)[number];
export const COMMAND_ACTIONS = ['acknowledge', 'shelve'] as const;
export type CommandAction = (typeof COMMAND_ACTIONS)[number];

export const PAYLOAD_SCHEMAS = {
  status: {
    $schema: DRAFT,
    title: 'pairwatch site liveness (retained; the Last Will says online: false)',
    ...object({ online: { type: 'boolean' }, at: time, version: textOrNull, startedAt: timeOrNull, reason: textOrNull }),
  },
  heartbeat: {
    $schema: DRAFT,
    title: 'pairwatch heartbeat (not retained)',
    ...object({ at: time, version: textOrNull, uptimeS: { type: 'number', minimum: 0 }, intervalS: { type: 'number', exclusiveMinimum: 0 }, lastEventNo: { type: ['integer', 'null'], minimum: 1 } }),
  },
  summary: {
    $schema: DRAFT,
    title: 'pairwatch site summary (retained)',
    ...object({
      at: time,
      siteName: text,
      timezone: text,
      url: textOrNull,
      worst: { enum: [...WORST_STATES] },
      counts: object({ alarm: count, trouble: count, system: count }),
      loops: object({ total: count, healthy: count, tripped: count, open: count, shorted: count, offline: count, unknown: count, outOfService: count }),
    }),
  },
  loop: {
    $schema: DRAFT,
    title: 'pairwatch loop state (retained, one topic per loop)',
    ...object({
      id: text,
      name: text,
      location: textOrNull,
      state: { enum: [...LOOP_STATES] },
      since: time,
      lastPulseAt: timeOrNull,
      inService: { type: 'boolean' },
      intermittent: { type: 'boolean' },
      periodMs: { type: 'number', exclusiveMinimum: 0 },
      alarm: {
        anyOf: [
          object({ id: { type: 'integer', minimum: 1 }, condition: { enum: [...CONDITIONS] }, priority: { enum: [...PRIORITIES] }, state: { enum: [...ALARM_STATES] }, active: { type: 'boolean' } }),
          { type: 'null' },
        ],
      },
      lineQuality: object({
        since: time,
        pulses: count,
        intervalMeanMs: numberOrNull,
        intervalJitterMs: numberOrNull,
        outOfTolerance: count,
        glitches: count,
        longPulses: count,
        lostFrames: count,
      }),
    }),
  },
  decoder: {
    $schema: DRAFT,
    title: 'pairwatch decoder link state (retained, one topic per decoder)',
    ...object({
      id: text,
      name: textOrNull,
      status: { enum: ['connecting', 'connected', 'disconnected', 'offline'] },
      connectedSince: timeOrNull,
      firmware: textOrNull,
      frames: count,
      badFrames: count,
      lostFrames: count,
      lastFrameAt: timeOrNull,
    }),
  },
  event: {
    $schema: DRAFT,
    title: 'pairwatch alarm event (QoS 1, not retained, message expiry set)',
    ...object({ eventNo: { type: 'integer', minimum: 1 }, kind: { enum: [...EVENT_KINDS] }, at: time, actor: text, note: textOrNull, alarm }),
  },
  alarms: {
    $schema: DRAFT,
    title: 'pairwatch active alarms (retained)',
    ...object({ at: time, lastEventNo: { type: ['integer', 'null'], minimum: 1 }, alarms: { type: 'array', items: alarm } }),
  },
  command: {
    $schema: DRAFT,
    title: 'pairwatch command (to the site; only when accept_commands is on)',
    type: 'object',
    additionalProperties: false,
    required: ['action', 'alarmId'],
    properties: {
      action: { enum: [...COMMAND_ACTIONS] },
      alarmId: { type: 'integer', minimum: 1 },
      note: { type: 'string', maxLength: 500 },
      minutes: { type: 'number', exclusiveMinimum: 0 },
      reason: { type: 'string', maxLength: 500 },
      token: { type: 'string', maxLength: 200 },
    },
  },
  reply: {
    $schema: DRAFT,
    title: 'pairwatch command reply (to the MQTT 5 response topic, with the correlation data)',
    ...object({ ok: { type: 'boolean' }, at: time, action: { anyOf: [{ enum: [...COMMAND_ACTIONS] }, { type: 'null' }] }, alarmId: { type: ['integer', 'null'] }, code: textOrNull, message: textOrNull }),
  },
} as const satisfies Record<TopicKind, object>;

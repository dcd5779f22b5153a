import { z } from 'zod';
import { ALARM_STATES } from '../../model/alarmState.js';
import { STANDING_WORDS } from '../../model/alarmStanding.js';
import { CONDITIONS, PRIORITIES } from '../../model/condition.js';
import { LOOP_STATES } from '../../model/loopState.js';
import { AUDIT_ACTIONS } from '../../alarms/alarmTypes.js';
import { foldFreeText, freeTextProblem } from '../http/freeText.js';

/**
 * Request and response shapes of /api/v1, as zod schemas. Requests are parsed with them; responses
 * are documented with them (the OpenAPI document is generated from this file), and tests check
 * responses against them.
 */

const isoTime = z.iso.datetime({ offset: false }).describe('ISO 8601 time in UTC, e.g. 2026-12-01T20:03:07.123Z');
const nullableIso = isoTime.nullable();

// ---------- requests ----------

const NOTE_MAX = 1000;

/** A person's note or reason, under the free-text rule (src/web/http/freeText.ts): line breaks folded, control characters refused. */
function freeText(typeError: string) {
  return z
    .string({ error: typeError })
    .max(NOTE_MAX, `must be at most ${NOTE_MAX} characters`)
    .overwrite(foldFreeText)
    // Checked before the trim: String.prototype.trim also removes control characters (VT, FF), and the
    // rule is that those are refused with a reason, never silently cut.
    .check((ctx) => {
      const problem = freeTextProblem(ctx.value);
      if (problem) ctx.issues.push({ code: 'custom', message: problem, input: ctx.value });
    })
    .overwrite((text) => text.trim());
}

const optionalNote = freeText('must be text').optional().describe('Free text kept in the audit trail; line breaks become spaces, control characters are refused');

export const ackBodySchema = z.strictObject({ note: optionalNote }, { error: 'must be a JSON object' });

export function shelveBodySchema(maxMinutes: number) {
  return z.strictObject(
    {
      minutes: z
        .number({ error: 'must be a number of minutes' })
        .int('must be a whole number of minutes')
        .min(1, 'must be at least 1')
        .max(maxMinutes, `must be at most ${maxMinutes} (web.max_shelve)`),
      reason: freeText('is required: say why the alarm is shelved').min(1, 'must not be empty').max(NOTE_MAX, `must be at most ${NOTE_MAX} characters`),
    },
    { error: 'must be a JSON object' },
  );
}

export const outOfServiceBodySchema = z.strictObject(
  {
    note: freeText('is required: say why the loop is out of service').min(1, 'must not be empty').max(NOTE_MAX, `must be at most ${NOTE_MAX} characters`),
  },
  { error: 'must be a JSON object' },
);

export const returnToServiceBodySchema = z.strictObject({ note: optionalNote }, { error: 'must be a JSON object' });

export const emptyBodySchema = z.strictObject({}, { error: 'must be a JSON object' });

export const alarmIdParamSchema = z.strictObject({
  id: z.string().regex(/^[1-9]\d{0,14}$/, 'must be a positive whole number'),
});

export const loopIdParamSchema = z.strictObject({
  id: z.string().min(1).max(40),
});

export const alarmsQuerySchema = z.strictObject({
  status: z.enum(['active', 'all'], { error: 'must be "active" or "all"' }).default('active'),
});

const isoQuery = z
  .string()
  .refine((text) => /^\d{4}-\d{2}-\d{2}(T[\d:.]+(Z|[+-]\d{2}:\d{2}))?$/.test(text) && !Number.isNaN(Date.parse(text)), {
    message: 'must be an ISO 8601 time such as 2026-12-01T20:00:00Z',
  });

export const eventsQuerySchema = z.strictObject({
  loop: z.string().min(1).max(40).optional().describe('Only events of this loop'),
  priority: z.enum(PRIORITIES, { error: 'must be one of alarm, trouble, system' }).optional(),
  since: isoQuery.optional().describe('Events at or after this time'),
  until: isoQuery.optional().describe('Events before this time'),
  cursor: z.string().min(1).max(200).optional().describe('nextCursor from the previous page'),
  limit: z
    .string()
    .regex(/^\d{1,4}$/, 'must be a whole number from 1 to 1000')
    .refine((text) => Number(text) >= 1 && Number(text) <= 1000, 'must be a whole number from 1 to 1000')
    .optional()
    .describe('Page size, 1–1000 (default 100)'),
});

export const timelineQuerySchema = z.strictObject({
  hours: z
    .string()
    .regex(/^\d{1,3}$/, 'must be a whole number of hours from 1 to 168')
    .refine((text) => Number(text) >= 1 && Number(text) <= 168, 'must be a whole number of hours from 1 to 168')
    .optional(),
});

// ---------- responses ----------

/** The alarm state, with the words the pages and mail use for each, so the API docs say the same. */
const alarmStateField = z
  .enum(ALARM_STATES)
  .describe(
    `unacknowledged: ${STANDING_WORDS['active-unacknowledged']} (with active: false, a latched alarm whose condition has gone: ${STANDING_WORDS['cleared-unacknowledged']}); ` +
      `acknowledged: ${STANDING_WORDS['active-acknowledged']}; returned-unacknowledged: ${STANDING_WORDS['cleared-unacknowledged']}; ` +
      `shelved: ${STANDING_WORDS.shelved}; out-of-service: ${STANDING_WORDS['out-of-service']}; normal: ${STANDING_WORDS.closed} (back to normal and acknowledged)`,
  );
const activeField = z.boolean().describe('Whether the condition is present now; false once it is back to normal');

export const loopAlarmSchema = z
  .object({
    id: z.number().int(),
    condition: z.enum(CONDITIONS),
    priority: z.enum(PRIORITIES),
    state: alarmStateField,
    active: activeField,
  })
  .nullable()
  .describe('The most urgent listed alarm on this loop');

export const loopSchema = z.object({
  id: z.string(),
  name: z.string(),
  location: z.string().nullable(),
  decoder: z.string(),
  input: z.number().int(),
  state: z.enum(LOOP_STATES),
  since: isoTime,
  lastPulseAt: nullableIso,
  inService: z.boolean(),
  serviceNote: z.string().nullable(),
  intermittent: z.boolean(),
  alarm: loopAlarmSchema,
});

export const lineQualitySchema = z.object({
  since: isoTime.describe('Start of the period these figures cover'),
  pulses: z.number().int(),
  intervalMeanMs: z.number().nullable(),
  intervalJitterMs: z.number().nullable(),
  outOfTolerance: z.number().int(),
  glitches: z.number().int(),
  longPulses: z.number().int(),
  lostFrames: z.number().int(),
});

export const loopDetailSchema = loopSchema.extend({
  periodMs: z.number(),
  lineQuality: lineQualitySchema,
});

export const alarmSchema = z.object({
  id: z.number().int(),
  loopId: z.string().nullable(),
  source: z.string(),
  condition: z.enum(CONDITIONS),
  priority: z.enum(PRIORITIES),
  state: alarmStateField,
  active: activeField,
  raisedAt: isoTime,
  clearedAt: nullableIso,
  ackedAt: nullableIso,
  ackedBy: z.string().nullable(),
  note: z.string().nullable(),
  shelvedUntil: nullableIso,
  shelveReason: z.string().nullable(),
});

export const alarmDetailSchema = alarmSchema.extend({
  loopName: z.string().nullable(),
  location: z.string().nullable(),
  notified: z.array(z.object({ contactId: z.string(), contactName: z.string(), firstQueuedAt: isoTime })),
  audit: z.array(
    z.object({ id: z.number().int(), at: isoTime, actor: z.string(), action: z.enum(AUDIT_ACTIONS), note: z.string().nullable() }),
  ),
});

export const eventSchema = z.object({
  id: z.string(),
  at: isoTime,
  loopId: z.string().nullable(),
  kind: z.enum(['state-change', 'audit']),
  priority: z.enum(PRIORITIES).nullable(),
  summary: z.string(),
  actor: z.string().nullable(),
  fromState: z.enum(LOOP_STATES).nullable(),
  toState: z.enum(LOOP_STATES).nullable(),
});

export const eventPageSchema = z.object({
  items: z.array(eventSchema),
  nextCursor: z.string().nullable().describe('Pass as cursor= for the next page; null on the last page'),
});

export const decoderSchema = z.object({
  id: z.string(),
  name: z.string().nullable(),
  port: z.string(),
  status: z.enum(['connecting', 'connected', 'disconnected', 'offline']),
  connectedSince: nullableIso,
  firmware: z.string().nullable(),
  inputs: z.number().int().nullable(),
  frames: z.number().int(),
  badFrames: z.number().int(),
  lostFrames: z.number().int(),
  lastFrameAt: nullableIso,
});

export const timelineSchema = z.object({
  from: isoTime,
  to: isoTime,
  states: z.array(z.object({ from: isoTime, to: isoTime, state: z.enum(LOOP_STATES) })),
  intervals: z.array(
    z.object({ at: isoTime, meanMs: z.number().nullable(), jitterMs: z.number().nullable(), outOfTolerance: z.number().int() }),
  ),
});

export const healthSchema = z.object({
  ok: z.boolean(),
  checks: z.array(z.object({ name: z.enum(['ingest', 'store', 'mail']), ok: z.boolean(), reason: z.string().nullable() })),
  reasons: z.array(z.string()).describe('One line per failing check; empty when ok'),
});

export const errorBodySchema = z.object({
  error: z.object({
    code: z.string().describe('Stable machine-readable code, e.g. PW_WEB_BAD_INPUT'),
    message: z.string(),
    field: z.string().nullable().describe('The request field at fault, when there is one'),
  }),
});

export const meSchema = z.object({ name: z.string(), role: z.enum(['viewer', 'operator', 'admin']), via: z.enum(['session', 'token']) });

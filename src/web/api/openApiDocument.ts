import { z } from 'zod';
import {
  ackBodySchema,
  alarmDetailSchema,
  alarmSchema,
  alarmsQuerySchema,
  decoderSchema,
  errorBodySchema,
  eventPageSchema,
  eventsQuerySchema,
  healthSchema,
  loopDetailSchema,
  loopSchema,
  meSchema,
  outOfServiceBodySchema,
  returnToServiceBodySchema,
  shelveBodySchema,
  timelineQuerySchema,
  timelineSchema,
} from './apiSchemas.js';

/**
 * The OpenAPI 3.0 document for /api/v1, generated from the same zod schemas the handlers parse with,
 * so the document cannot drift from the code.
 */

type JsonObject = Record<string, unknown>;

function schemaOf(schema: z.ZodType, io: 'input' | 'output'): JsonObject {
  const json = z.toJSONSchema(schema, { target: 'openapi-3.0', io, unrepresentable: 'any' }) as JsonObject;
  delete json.$schema;
  return json;
}

const ref = (name: string) => ({ $ref: `#/components/schemas/${name}` });
const json = (schema: JsonObject) => ({ 'application/json': { schema } });

function queryParameters(schema: z.ZodObject): JsonObject[] {
  return Object.entries(schema.shape).map(([name, field]) => {
    const fieldSchema = schemaOf(field as z.ZodType, 'input');
    const description = (field as z.ZodType).description;
    return {
      name,
      in: 'query',
      required: false,
      schema: fieldSchema,
      ...(description ? { description } : {}),
    };
  });
}

const errors = (...codes: number[]): JsonObject => {
  const text: Record<number, string> = {
    400: 'Bad input; `error.field` names the field',
    401: 'No valid session or token',
    403: 'Role too low, or a browser form without its CSRF token',
    404: 'Unknown id',
    409: 'The alarm or loop is not in a state that allows this',
    415: 'Body is not JSON',
  };
  return Object.fromEntries(codes.map((c) => [String(c), { description: text[c] ?? 'Error', content: json(ref('Error')) }]));
};

const idParam = (what: string, integer: boolean) => ({
  name: 'id',
  in: 'path',
  required: true,
  description: `The ${what}'s id`,
  schema: integer ? { type: 'integer', minimum: 1 } : { type: 'string' },
});

export function buildOpenApiDocument(options: { maxShelveMinutes: number; siteName: string }): JsonObject {
  const read = (summary: string, okSchema: JsonObject, extra: JsonObject = {}, errs: number[] = [401]) => ({
    summary,
    security: [{ bearerToken: [] }, { sessionCookie: [] }],
    ...extra,
    responses: { '200': { description: 'OK', content: json(okSchema) }, ...errors(...errs) },
  });
  const act = (summary: string, idWhat: 'alarm' | 'loop', body: string | null, okRef: string) => ({
    summary,
    description: 'Needs the operator role. Browser sessions must also send the session\'s CSRF token as X-CSRF-Token.',
    security: [{ bearerToken: [] }, { sessionCookie: [] }],
    parameters: [idParam(idWhat, idWhat === 'alarm')],
    ...(body ? { requestBody: { required: body !== 'Ack' && body !== 'ReturnToService', content: json(ref(body)) } } : {}),
    responses: { '200': { description: 'Done; the updated record', content: json(ref(okRef)) }, ...errors(400, 401, 403, 404, 409, 415) },
  });
  const list = (name: string) => ({ type: 'array', items: ref(name) });

  return {
    openapi: '3.0.3',
    info: {
      title: 'pairwatch API',
      version: '1',
      description:
        `Loops, alarms and events of the ${options.siteName} monitor. Times are ISO 8601 UTC. ` +
        'Authenticate with `Authorization: Bearer <token>` (create one with `pairwatch token create NAME`).',
    },
    servers: [{ url: '/' }],
    paths: {
      '/api/v1/loops': { get: read('Every loop with its state', list('Loop')) },
      '/api/v1/loops/{id}': { get: read('One loop with its line-quality figures', ref('LoopDetail'), { parameters: [idParam('loop', false)] }, [401, 404]) },
      '/api/v1/loops/{id}/timeline': {
        get: read('State bands and per-minute pulse intervals', ref('Timeline'), { parameters: [idParam('loop', false), ...queryParameters(timelineQuerySchema)] }, [400, 401, 404]),
      },
      '/api/v1/loops/{id}/out-of-service': { post: act('Take a loop out of service (with a note)', 'loop', 'OutOfService', 'LoopDetail') },
      '/api/v1/loops/{id}/return-to-service': { post: act('Put a loop back into service', 'loop', 'ReturnToService', 'LoopDetail') },
      '/api/v1/alarms': { get: read('Alarms, active (default) or all', list('Alarm'), { parameters: queryParameters(alarmsQuerySchema) }, [400, 401]) },
      '/api/v1/alarms/{id}': { get: read('One alarm with who was told and its audit trail', ref('AlarmDetail'), { parameters: [idParam('alarm', true)] }, [400, 401, 404]) },
      '/api/v1/alarms/{id}/ack': { post: act('Acknowledge an alarm, with an optional note', 'alarm', 'Ack', 'AlarmDetail') },
      '/api/v1/alarms/{id}/shelve': { post: act(`Shelve an alarm for up to ${options.maxShelveMinutes} minutes, with a reason`, 'alarm', 'Shelve', 'AlarmDetail') },
      '/api/v1/alarms/{id}/unshelve': { post: act('Unshelve an alarm', 'alarm', null, 'AlarmDetail') },
      '/api/v1/events': { get: read('State changes and actions, newest first, a page at a time', ref('EventPage'), { parameters: queryParameters(eventsQuerySchema) }, [400, 401, 404]) },
      '/api/v1/decoders': { get: read('The line decoders and their link figures', list('Decoder')) },
      '/api/v1/me': { get: read('Who the credentials belong to', ref('Me')) },
      '/healthz': {
        get: {
          summary: 'Whether ingest, store and mail work (no authentication)',
          security: [],
          responses: {
            '200': { description: 'All working', content: json(ref('Health')) },
            '503': { description: 'Something is not working; `reasons` says what', content: json(ref('Health')) },
          },
        },
      },
    },
    components: {
      securitySchemes: {
        bearerToken: { type: 'http', scheme: 'bearer', description: 'An API token from `pairwatch token create`' },
        sessionCookie: { type: 'apiKey', in: 'cookie', name: 'pw_session', description: 'A browser session from /login' },
      },
      schemas: {
        Loop: schemaOf(loopSchema, 'output'),
        LoopDetail: schemaOf(loopDetailSchema, 'output'),
        Alarm: schemaOf(alarmSchema, 'output'),
        AlarmDetail: schemaOf(alarmDetailSchema, 'output'),
        EventPage: schemaOf(eventPageSchema, 'output'),
        Decoder: schemaOf(decoderSchema, 'output'),
        Timeline: schemaOf(timelineSchema, 'output'),
        Health: schemaOf(healthSchema, 'output'),
        Me: schemaOf(meSchema, 'output'),
        Error: schemaOf(errorBodySchema, 'output'),
        Ack: schemaOf(ackBodySchema, 'input'),
        Shelve: schemaOf(shelveBodySchema(options.maxShelveMinutes), 'input'),
        OutOfService: schemaOf(outOfServiceBodySchema, 'input'),
        ReturnToService: schemaOf(returnToServiceBodySchema, 'input'),
      },
    },
  };
}

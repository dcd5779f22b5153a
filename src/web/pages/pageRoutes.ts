import type { FastifyInstance, FastifyReply, FastifyRequest } from 'fastify';
import { alarmIdParamSchema, loopIdParamSchema } from '../api/apiSchemas.js';
import { parseInput } from '../api/parseInput.js';
import type { Principal } from '../auth/principal.js';
import { requireCsrf, requireRole } from '../auth/requestAuth.js';
import { assertCommandOk } from '../http/commandOutcome.js';
import { formBody, formField, freeTextField, requiredFormField, requiredFreeTextField } from '../http/formFields.js';
import { badInput, notFound } from '../webErrors.js';
import type { WebContext } from '../webContext.js';
import { renderAlarmPage } from './alarmPage.js';
import { renderBoardList, renderBoardPage, type BoardData } from './boardPage.js';
import { csvLine } from './csv.js';
import { parseHistoryFilter, type HistoryFilter } from './historyFilter.js';
import { renderHistoryPage } from './historyPage.js';
import { renderLoopPage } from './loopPage.js';
import { siteDateTime } from './siteTime.js';

/** Confirmation lines after POST-redirect-GET, keyed by the `done` query value. */
const FLASH = {
  ack: 'Acknowledged.',
  shelve: 'Shelved. It comes back by itself when the time is up.',
  unshelve: 'Unshelved.',
  oos: 'Taken out of service.',
  rts: 'Back in service.',
} as const;

const CSV_MAX_ROWS = 100_000;
const PAGE_SIZE = 100;
const DAY_MS = 86_400_000;

function flashOf(request: FastifyRequest): string | null {
  const done = (request.query as Record<string, unknown>).done;
  return typeof done === 'string' && done in FLASH ? FLASH[done as keyof typeof FLASH] : null;
}

function sendHtml(reply: FastifyReply, markup: string): FastifyReply {
  return reply.type('text/html; charset=utf-8').send(markup);
}

/** Server-rendered pages for people. Forms post here and are answered with a redirect (POST-redirect-GET). */
export function registerPageRoutes(app: FastifyInstance, ctx: WebContext): void {
  const { read, commands, config } = ctx;
  const tz = config.site.timezone;
  const maxShelveMinutes = Math.max(1, Math.floor(config.web.max_shelve / 60_000));

  const boardData = (): BoardData => ({
    siteName: read.siteName(),
    timeZone: tz,
    now: ctx.now(),
    loops: read.loops(),
    otherAlarms: read.alarms('active').filter((a) => a.loopId === null),
  });
  const operatorForm = (request: FastifyRequest): { principal: Principal; body: Record<string, unknown> } => {
    const principal = requireRole(request, 'operator');
    const body = formBody(request.body);
    requireCsrf(request, ctx, principal, formField(body, 'csrf', 200));
    return { principal, body };
  };
  const alarmIdOf = (request: FastifyRequest) => Number(parseInput(alarmIdParamSchema, request.params, 'params').id);
  const loopIdOf = (request: FastifyRequest) => parseInput(loopIdParamSchema, request.params, 'params').id;

  app.get('/', async (request, reply) => {
    const principal = requireRole(request, 'viewer');
    return sendHtml(reply, renderBoardPage(boardData(), principal, flashOf(request)));
  });

  app.get('/board/list', async (request, reply) => {
    requireRole(request, 'viewer');
    return sendHtml(reply, renderBoardList(boardData()));
  });

  app.get('/alarms/:id', async (request, reply) => {
    const principal = requireRole(request, 'viewer');
    const id = alarmIdOf(request);
    const alarm = read.alarm(id);
    if (!alarm) throw notFound('alarm', id);
    const page = renderAlarmPage({ siteName: read.siteName(), timeZone: tz, now: ctx.now(), alarm, maxShelveMinutes }, principal, flashOf(request));
    return sendHtml(reply, page);
  });

  app.post('/alarms/:id/ack', async (request, reply) => {
    const { principal, body } = operatorForm(request);
    const id = alarmIdOf(request);
    const note = freeTextField(body, 'note') ?? null;
    assertCommandOk(commands.acknowledge(id, principal.name, note), id);
    return reply.redirect(`/alarms/${id}?done=ack`, 303);
  });

  app.post('/alarms/:id/shelve', async (request, reply) => {
    const { principal, body } = operatorForm(request);
    const id = alarmIdOf(request);
    const minutesText = requiredFormField(body, 'minutes', 10);
    const minutes = Number(minutesText);
    if (!/^\d+$/.test(minutesText) || minutes < 1 || minutes > maxShelveMinutes) {
      throw badInput('minutes', `must be a whole number of minutes from 1 to ${maxShelveMinutes}`);
    }
    const reason = requiredFreeTextField(body, 'reason');
    assertCommandOk(commands.shelve(id, principal.name, minutes, reason), id);
    return reply.redirect(`/alarms/${id}?done=shelve`, 303);
  });

  app.post('/alarms/:id/unshelve', async (request, reply) => {
    const { principal } = operatorForm(request);
    const id = alarmIdOf(request);
    assertCommandOk(commands.unshelve(id, principal.name), id);
    return reply.redirect(`/alarms/${id}?done=unshelve`, 303);
  });

  app.get('/loops/:id', async (request, reply) => {
    const principal = requireRole(request, 'viewer');
    const id = loopIdOf(request);
    const loop = read.loop(id);
    if (!loop) throw notFound('loop', id);
    const now = ctx.now();
    const settings = config.loops.find((l) => l.id === id);
    const page = renderLoopPage(
      {
        siteName: read.siteName(),
        timeZone: tz,
        now,
        loop,
        timeline: read.timeline(id, now - DAY_MS, now),
        intervalMinRatio: settings?.interval_min_ratio ?? 0.5,
        intervalMaxRatio: settings?.interval_max_ratio ?? 1.5,
      },
      principal,
      flashOf(request),
    );
    return sendHtml(reply, page);
  });

  app.post('/loops/:id/out-of-service', async (request, reply) => {
    const { principal, body } = operatorForm(request);
    const id = loopIdOf(request);
    const note = requiredFreeTextField(body, 'note');
    assertCommandOk(commands.takeOutOfService(id, principal.name, note), id);
    return reply.redirect(`/loops/${encodeURIComponent(id)}?done=oos`, 303);
  });

  app.post('/loops/:id/return-to-service', async (request, reply) => {
    const { principal, body } = operatorForm(request);
    const id = loopIdOf(request);
    assertCommandOk(commands.returnToService(id, principal.name, freeTextField(body, 'note') ?? null), id);
    return reply.redirect(`/loops/${encodeURIComponent(id)}?done=rts`, 303);
  });

  const historyFilter = (request: FastifyRequest): HistoryFilter => {
    const loops = read.loops();
    return parseHistoryFilter(request.query as Record<string, unknown>, new Set(loops.map((l) => l.id)), tz, ctx.now());
  };

  app.get('/history', async (request, reply) => {
    const principal = requireRole(request, 'viewer');
    const filter = historyFilter(request);
    const page = read.events({
      loopId: filter.loop ?? undefined,
      priority: filter.priority ?? undefined,
      sinceMs: filter.sinceMs,
      untilMs: filter.untilMs,
      cursor: filter.cursor,
      limit: PAGE_SIZE,
    });
    const markup = renderHistoryPage(
      { siteName: read.siteName(), timeZone: tz, now: ctx.now(), loops: read.loops(), filter, items: page.items, nextCursor: page.nextCursor },
      principal,
    );
    return sendHtml(reply, markup);
  });

  app.get('/history.csv', async (request, reply) => {
    requireRole(request, 'viewer');
    const filter = historyFilter(request);
    const lines = [csvLine(['time_utc', `time_local_${tz}`, 'loop', 'kind', 'priority', 'summary', 'actor', 'from_state', 'to_state'])];
    let cursor = filter.cursor;
    let rows = 0;
    do {
      const page = read.events({
        loopId: filter.loop ?? undefined,
        priority: filter.priority ?? undefined,
        sinceMs: filter.sinceMs,
        untilMs: filter.untilMs,
        cursor,
        limit: 1000,
      });
      for (const e of page.items) {
        lines.push(csvLine([new Date(e.atMs).toISOString(), siteDateTime(e.atMs, tz), e.loopId, e.kind, e.priority, e.summary, e.actor, e.fromState, e.toState]));
      }
      rows += page.items.length;
      cursor = page.nextCursor ?? undefined;
    } while (cursor && rows < CSV_MAX_ROWS);
    const stamp = new Date(ctx.now()).toISOString().slice(0, 10);
    return reply
      .type('text/csv; charset=utf-8')
      .header('content-disposition', `attachment; filename="pairwatch-history-${stamp}.csv"`)
      .send(lines.join(''));
  });
}

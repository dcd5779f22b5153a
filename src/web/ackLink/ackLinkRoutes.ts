import type { FastifyInstance, FastifyReply } from 'fastify';
import { formBody, formField } from '../http/formFields.js';
import { renderAckConfirmPage, renderAckDonePage } from '../pages/ackLinkPage.js';
import { renderMessagePage } from '../pages/messagePage.js';
import type { WebContext } from '../webContext.js';

/** The actor recorded when an alarm is acknowledged from a mailed link rather than by a signed-in user. */
export const MAIL_LINK_ACTOR = 'mail-link';

const REFUSAL = {
  malformed: { status: 404, text: 'This acknowledge link is not valid. It may have been cut short: open it from the mail again.' },
  forged: { status: 403, text: 'This acknowledge link was not made by this monitor.' },
  expired: { status: 410, text: 'This acknowledge link has expired. Sign in to acknowledge the alarm.' },
  used: { status: 410, text: 'This acknowledge link has been used already. Each link works once.' },
  mismatch: { status: 403, text: 'This acknowledge link belongs to a different alarm.' },
  'no-alarm': { status: 404, text: 'The alarm this link names does not exist on this monitor.' },
} as const;
type Refusal = keyof typeof REFUSAL;

/**
 * /ack/:token. GET only shows what the link would do: mail scanners and link previews open links, so
 * opening one must never acknowledge. POST (the page's button) acknowledges, once. The token is the
 * credential, so the form needs no session and no CSRF token; its hidden alarm id must match the token.
 */
export function registerAckLinkRoutes(app: FastifyInstance, ctx: WebContext): void {
  const refuse = (reply: FastifyReply, why: Refusal) => {
    const { status, text } = REFUSAL[why];
    return reply
      .code(status)
      .type('text/html; charset=utf-8')
      .send(
        renderMessagePage({
          siteName: ctx.config.site.name,
          principal: null,
          title: 'Link refused',
          message: text,
          links: [{ href: '/login', label: 'Sign in' }],
        }),
      );
  };

  const check = (token: string) => {
    const result = ctx.ackLinks.verify(token, ctx.now());
    if (!result.ok) return { refusal: (result.reason in REFUSAL ? result.reason : 'malformed') as Refusal };
    const alarm = ctx.read.alarm(result.alarmId);
    if (!alarm) return { refusal: 'no-alarm' as const };
    return { claims: result, alarm };
  };

  app.get('/ack/:token', async (request, reply) => {
    const { token } = request.params as { token: string };
    reply.header('cache-control', 'no-store');
    const checked = check(token);
    if ('refusal' in checked) return refuse(reply, checked.refusal!);
    if (ctx.ackLinks.isUsed(checked.claims.tokenId)) return refuse(reply, 'used');
    return reply
      .type('text/html; charset=utf-8')
      .send(renderAckConfirmPage({ siteName: ctx.config.site.name, timeZone: ctx.config.site.timezone, now: ctx.now(), alarm: checked.alarm, token }));
  });

  app.post('/ack/:token', async (request, reply) => {
    const { token } = request.params as { token: string };
    reply.header('cache-control', 'no-store');
    const checked = check(token);
    if ('refusal' in checked) return refuse(reply, checked.refusal!);
    const { claims, alarm } = checked;
    const body = formBody(request.body);
    if (formField(body, 'alarm', 20) !== String(claims.alarmId)) return refuse(reply, 'mismatch');
    const note = formField(body, 'note')?.trim() || null;
    if (!ctx.ackLinks.markUsed(claims.tokenId, ctx.now())) return refuse(reply, 'used');
    const result = ctx.commands.acknowledge(claims.alarmId, MAIL_LINK_ACTOR, note);
    ctx.log.info({ alarmId: claims.alarmId, ok: result.ok, ip: request.ip }, 'acknowledge link used');
    const fresh = ctx.read.alarm(claims.alarmId) ?? alarm;
    if (!result.ok) {
      return reply
        .code(409)
        .type('text/html; charset=utf-8')
        .send(
          renderMessagePage({
            siteName: ctx.config.site.name,
            principal: null,
            title: 'Nothing to acknowledge',
            message: fresh.ackedBy ? `This alarm was already acknowledged by ${fresh.ackedBy}.` : result.message,
            links: [{ href: `/alarms/${claims.alarmId}`, label: 'Open the alarm (sign-in needed)' }],
          }),
        );
    }
    return reply.type('text/html; charset=utf-8').send(renderAckDonePage({ siteName: ctx.config.site.name, alarm: fresh }));
  });
}

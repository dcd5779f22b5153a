import type { FastifyInstance, FastifyReply } from 'fastify';
import { formBody, formField, freeTextField } from '../http/formFields.js';
import { renderAckConfirmPage, renderAckDonePage } from '../pages/ackLinkPage.js';
import { renderMessagePage } from '../pages/messagePage.js';
import type { WebContext } from '../webContext.js';

/** The actor recorded for a link that names no contact (links mailed before links carried one). */
export const MAIL_LINK_ACTOR = 'mail-link';

/**
 * Who acknowledged through a mailed link: the contact it was mailed to, as the config names them
 * ("Farm office (mail link)"). A user name can never look like this (no spaces or brackets allowed).
 */
export function mailLinkActor(contactName: string | null): string {
  return contactName === null ? MAIL_LINK_ACTOR : `${contactName} (mail link)`;
}

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
    const note = freeTextField(body, 'note') ?? null;
    // From here to the acknowledge command's commit nothing awaits, so no second POST can slip in between.
    if (ctx.ackLinks.isUsed(claims.tokenId)) return refuse(reply, 'used');
    const contact = claims.contactId === null ? null : (ctx.config.contacts.find((c) => c.id === claims.contactId) ?? null);
    const actor = mailLinkActor(contact ? contact.name : claims.contactId);
    const now = ctx.now();
    const result = ctx.commands.acknowledge(claims.alarmId, actor, note, () => ctx.ackLinks.spend(token, now));
    if (!result.ok && result.code === 'PW_ACK_LINK_USED') return refuse(reply, 'used');
    ctx.log.info({ alarmId: claims.alarmId, ok: result.ok, ip: request.ip, contact: claims.contactId }, 'acknowledge link used');
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

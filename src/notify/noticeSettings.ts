import type { SiteConfig } from '../config/schema.js';
import { createMessageIdFactory, messageIdDomain } from './messageId.js';
import { newAckTokenId } from './ackToken.js';

export interface ContactRef {
  id: string;
  name: string;
  email: string;
}

export interface LoopRef {
  id: string;
  name: string;
  location?: string | null | undefined;
}

export interface DecoderRef {
  id: string;
  name?: string | null | undefined;
  /** The configured port: what to check when the decoder goes quiet depends on how it is linked. */
  port?: string | undefined;
}

/** What composing notice mail needs that does not change between mails. */
export interface NoticeSettings {
  siteName: string;
  timeZone: string;
  from: string;
  /** Base URL people reach the web server at; acknowledge links hang off it. */
  publicUrl: string;
  contacts: readonly ContactRef[];
  loops: readonly LoopRef[];
  decoders?: readonly DecoderRef[] | undefined;
  /** Signs acknowledge links; null leaves them out. */
  ack: { secret: Buffer; ttlMs: number; newTokenId: () => string } | null;
  /** Signs reply tokens and names the mailbox replies go to (mail.imap); null: replies are not read. */
  reply?: { secret: Buffer; ttlMs: number; address: string; tagAddress?: boolean } | null | undefined;
  newMessageId: () => string;
}

/** `http://127.0.0.1:8080` from `listen`, unless `public_url` says otherwise; no trailing slash. */
export function publicUrlFor(web: SiteConfig['web']): string {
  const base = web.public_url ?? `${web.tls ? 'https' : 'http'}://${web.listen}`;
  return base.replace(/\/+$/, '');
}

/** Settings from the site config and the signing key (loadOrCreateAckSecret). */
export function noticeSettingsFromConfig(config: SiteConfig, ackSecret: Buffer | null): NoticeSettings {
  return {
    siteName: config.site.name,
    timeZone: config.site.timezone,
    from: config.mail.from,
    publicUrl: publicUrlFor(config.web),
    contacts: config.contacts,
    loops: config.loops.map((loop) => ({ id: loop.id, name: loop.name, location: loop.location ?? null })),
    decoders: config.decoders.map((decoder) => ({ id: decoder.id, name: decoder.name ?? null, port: decoder.port })),
    ack: ackSecret ? { secret: ackSecret, ttlMs: config.web.ack_link_ttl, newTokenId: newAckTokenId } : null,
    newMessageId: createMessageIdFactory(messageIdDomain(config.mail.from)),
    reply: ackSecret && config.mail.imap ? { secret: ackSecret, ttlMs: config.web.ack_link_ttl, address: replyAddressFor(config), tagAddress: config.mail.imap.reply_tag } : null,
  };
}

/** Where replies should go: the IMAP login when it is an address (it usually is), else the From address. */
export function replyAddressFor(config: SiteConfig): string {
  const user = config.mail.imap?.user ?? '';
  if (/^[^\s@<>]+@[^\s@<>]+$/.test(user)) return user;
  return /<([^<>]+)>\s*$/.exec(config.mail.from)?.[1] ?? config.mail.from.trim();
}

/** A mailbox for a To field, with the display name quoted so commas or quotes in it cannot split the address. */
export function mailbox(contact: ContactRef): string {
  return `"${contact.name.replace(/["\\]/g, '\\$&')}" <${contact.email}>`;
}

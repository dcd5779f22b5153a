import type { Database } from 'better-sqlite3';
import { ackTokenUsedAt, markAckTokenUsed } from '../store/alarmRepo.js';
import { verifyAckToken } from './ackToken.js';

export type AckLinkRefusal = 'malformed' | 'forged' | 'expired' | 'used' | 'other-alarm';

export type AckLinkCheck =
  | { ok: true; alarmId: number; contactId: string | null; tokenId: string; expiresAt: number }
  | { ok: false; reason: AckLinkRefusal };

/** Plain words for a refused link, for the confirmation page. */
export const ACK_LINK_REFUSAL_TEXT = {
  malformed: 'This acknowledge link is damaged (perhaps cut short by the mail program). Open the alarm on the board instead.',
  forged: 'This acknowledge link was not made by this monitor.',
  expired: 'This acknowledge link has expired. Open the alarm on the board to acknowledge it.',
  used: 'This acknowledge link has already been used.',
  'other-alarm': 'This acknowledge link belongs to a different alarm.',
} as const satisfies Record<AckLinkRefusal, string>;

/**
 * For the confirmation page (GET): is the link good, without spending it. Mail scanners open links;
 * this must never change anything.
 */
export function checkAckLink(db: Database, token: string, secret: Buffer, now: number, forAlarmId?: number): AckLinkCheck {
  const verdict = verifyAckToken(token, secret, now);
  if (!verdict.ok) return verdict;
  if (forAlarmId !== undefined && verdict.alarmId !== forAlarmId) return { ok: false, reason: 'other-alarm' };
  if (ackTokenUsedAt(db, verdict.tokenId) !== null) return { ok: false, reason: 'used' };
  return verdict;
}

/**
 * For the confirming POST: checks the link and spends it. Call inside the transaction that
 * acknowledges, so a link is spent exactly when its acknowledgement is committed.
 */
export function redeemAckLink(db: Database, token: string, secret: Buffer, now: number, forAlarmId?: number): AckLinkCheck {
  const verdict = verifyAckToken(token, secret, now);
  if (!verdict.ok) return verdict;
  if (forAlarmId !== undefined && verdict.alarmId !== forAlarmId) return { ok: false, reason: 'other-alarm' };
  if (!markAckTokenUsed(db, verdict.tokenId, now)) return { ok: false, reason: 'used' };
  return verdict;
}

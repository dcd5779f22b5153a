import type BetterSqlite3 from 'better-sqlite3';
import { verifyAckToken } from '../../notify/ackToken.js';
import { redeemAckLink } from '../../notify/redeemAckToken.js';
import { ackTokenUsedAt } from '../../store/alarmRepo.js';
import type { AckLinkPort } from './ackLinkPort.js';

/** The real acknowledge-link checks: the notify module's signed tokens, spent in the store's table. */
export function createAckLinks(db: BetterSqlite3.Database, secret: Buffer): AckLinkPort {
  return {
    verify: (token, now) => verifyAckToken(token, secret, now),
    isUsed: (tokenId) => ackTokenUsedAt(db, tokenId) !== null,
    spend: (token, at) => redeemAckLink(db, token, secret, at).ok,
  };
}

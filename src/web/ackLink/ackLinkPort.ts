/**
 * What the acknowledge-link pages need from the notify and store modules. Kept as a small local
 * interface so the web layer can be tested with the real token code and still not reach into SQL.
 */
export type AckLinkCheck =
  | { ok: true; alarmId: number; contactId: string | null; tokenId: string; expiresAt: number }
  | { ok: false; reason: string };

export interface AckLinkPort {
  /** Shape, signature and expiry. */
  verify(token: string, now: number): AckLinkCheck;
  /** Whether the token has been spent already (checked on GET, so a spent link says so). */
  isUsed(tokenId: string): boolean;
  /**
   * Spends the token; false when it was spent already. Handed to the acknowledge command, which calls
   * it inside the transaction that records the acknowledgement: a refused acknowledgement spends nothing.
   */
  spend(token: string, at: number): boolean;
}

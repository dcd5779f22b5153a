/**
 * Sign-in rate limit, counted over the last minute both per client address and per user name. An
 * attempt is counted (reserved) before its password is checked, so parallel guesses cannot all slip
 * under the limit while their hashes run.
 *
 * - An address with `limitPerMinute` failures is refused, whatever name it tries.
 * - A name with `limitPerMinute` failures is refused only to addresses that have failed themselves
 *   within the window: one address guessing cannot lock the real user out from their own phone, while
 *   a guesser spread over many addresses still gets at most one try per address per minute.
 *
 * Pure: the counts come from the store.
 */
export const LOGIN_WINDOW_MS = 60_000;

export type ThrottleDecision = { allowed: true } | { allowed: false; retryAfterSeconds: number };

export function decideLoginThrottle(failures: { byIp: number; byName: number }, limitPerMinute: number): ThrottleDecision {
  if (failures.byIp >= limitPerMinute || (failures.byName >= limitPerMinute && failures.byIp > 0)) {
    return { allowed: false, retryAfterSeconds: LOGIN_WINDOW_MS / 1000 };
  }
  return { allowed: true };
}

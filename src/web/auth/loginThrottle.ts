/**
 * Sign-in rate limit: at most `limitPerMinute` failed attempts in the last minute, counted both per
 * client address and per user name (so neither many names from one address nor one name from many
 * addresses gets unlimited guesses). Pure: the counts come from the store.
 */
export const LOGIN_WINDOW_MS = 60_000;

export type ThrottleDecision = { allowed: true } | { allowed: false; retryAfterSeconds: number };

export function decideLoginThrottle(failures: { byIp: number; byName: number }, limitPerMinute: number): ThrottleDecision {
  if (failures.byIp >= limitPerMinute || failures.byName >= limitPerMinute) {
    return { allowed: false, retryAfterSeconds: LOGIN_WINDOW_MS / 1000 };
  }
  return { allowed: true };
}

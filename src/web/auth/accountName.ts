/**
 * Names of users and API tokens. They appear in the audit trail as who did something, so they are
 * kept plain, and the names the monitor itself writes there are reserved.
 */
const NAME_RE = /^[A-Za-z0-9][A-Za-z0-9._@-]{0,63}$/;
export const RESERVED_ACTORS = ['mail-link', 'monitor', 'system'] as const;

export function accountNameProblem(name: string): string | null {
  if (!NAME_RE.test(name)) return 'must be 1–64 of letters, digits, ".", "_", "@" or "-", starting with a letter or digit';
  if ((RESERVED_ACTORS as readonly string[]).includes(name.toLowerCase())) return `"${name}" is reserved for the monitor's own entries`;
  return null;
}

/** How an API token's actions are recorded, so they are never mistaken for a person's. */
export function tokenActor(tokenName: string): string {
  return `token:${tokenName}`;
}

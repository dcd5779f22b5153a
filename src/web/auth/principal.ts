import type { UserRole } from '../../store/accountRepos.js';

/** Who is making a request: a signed-in browser session or an API token. */
export interface Principal {
  kind: 'session' | 'token';
  name: string;
  role: UserRole;
  /** The session's synchronizer token for forms; null for API tokens (not sent by browsers on their own). */
  csrfToken: string | null;
  sessionIdHash: string | null;
}

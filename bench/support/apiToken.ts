import { insertApiToken, type UserRole } from '../../src/store/accountRepos.js';
import { openStore } from '../../src/store/openStore.js';
import { newApiToken, sha256Hex } from '../../src/web/auth/secretToken.js';
import { BenchError } from './benchError.js';

/**
 * Creates the database (migrations included) and stores an API token (a viewer's unless told) in it the way
 * `pairwatch token create` does — only its hash — before the monitor opens the file.
 */
export function grantApiToken(dbPath: string, now: number, role: UserRole = 'viewer'): string {
  const token = newApiToken();
  const store = openStore({ path: dbPath });
  try {
    // Named by role: a second token of a name already taken is not stored (as `token create` refuses it).
    const created = insertApiToken(store.db, { name: `bench-${role}`, tokenHash: sha256Hex(token), role, createdAt: now });
    if (!created) throw new BenchError('PW_BENCH_TOKEN', `a token named bench-${role} exists already in ${dbPath}`);
  } finally {
    store.close();
  }
  return token;
}

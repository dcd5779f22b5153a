import { insertApiToken } from '../../src/store/accountRepos.js';
import { openStore } from '../../src/store/openStore.js';
import { newApiToken, sha256Hex } from '../../src/web/auth/secretToken.js';

/**
 * Creates the database (migrations included) and stores a viewer API token in it the way
 * `pairwatch token create` does — only its hash — before the monitor opens the file.
 */
export function grantApiToken(dbPath: string, now: number): string {
  const token = newApiToken();
  const store = openStore({ path: dbPath });
  try {
    insertApiToken(store.db, { name: 'bench', tokenHash: sha256Hex(token), role: 'viewer', createdAt: now });
  } finally {
    store.close();
  }
  return token;
}

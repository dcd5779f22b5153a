import { parseArgs } from 'node:util';
import { findApiTokenByName, insertApiToken, listApiTokens, revokeApiToken, USER_ROLES } from '../store/accountRepos.js';
import type { Store } from '../store/openStore.js';
import { accountNameProblem } from '../web/auth/accountName.js';
import { isUserRole } from '../web/auth/roles.js';
import { newApiToken, sha256Hex } from '../web/auth/secretToken.js';
import { defineCommand, UsageError } from './defineCommand.js';
import { loadAccountsConfigForCli } from './loadAccountsConfig.js';
import { DEFAULT_CONFIG_PATH } from './loadConfigForCli.js';
import { openStoreForAccounts } from './userCommand.js';

const NOTE = 'The token is printed once, on its own line; only its SHA-256 hash is stored.\nSend it as "Authorization: Bearer <token>".\n';
const SUBCOMMANDS = {
  create: `usage: pairwatch token create NAME [--role viewer|operator|admin] [--config FILE]   (default role: viewer)\n${NOTE}`,
  revoke: 'usage: pairwatch token revoke NAME [--config FILE]\n  The token stops working at once; its name stays taken, for the audit trail.\n',
  list: 'usage: pairwatch token list [--config FILE]\n  Lists the tokens, their roles and whether each is live or revoked.\n',
} as const;
const USAGE = `usage: pairwatch token create|revoke|list …
${Object.values(SUBCOMMANDS)
  .map((u) => `  ${u.split('\n')[0]!.replace('usage: ', '')}`)
  .join('\n')}
${NOTE}`;

/** `pairwatch token …`: API tokens for scripts and other systems. */
export const tokenCommand = defineCommand({ name: 'token', usage: USAGE, subcommands: SUBCOMMANDS, run: async (argv, io) => {
  const { values, positionals } = parseArgs({
    args: argv,
    allowPositionals: true,
    options: { config: { type: 'string', default: DEFAULT_CONFIG_PATH }, role: { type: 'string' } },
  });
  const [action, name, ...extra] = positionals;
  if (!action) throw new UsageError('give a subcommand: create, revoke or list');
  if (!(action in SUBCOMMANDS)) throw new UsageError(`unknown subcommand "${action}"`);
  if (extra.length > 0 || (action !== 'list' && !name)) {
    io.stderr.write(`pairwatch token ${action}: ${extra.length > 0 ? `unexpected argument "${extra[0]}"` : 'a token NAME is needed'}\n\n${SUBCOMMANDS[action as keyof typeof SUBCOMMANDS]}`);
    return 2;
  }
  if (name !== undefined) {
    const problem = accountNameProblem(name);
    if (problem) {
      io.stderr.write(`pairwatch token ${action}: NAME ${problem}\n`);
      return 2;
    }
  }
  const role = values.role ?? 'viewer';
  if (!isUserRole(role)) {
    io.stderr.write(`pairwatch token ${action}: --role "${role}" is not one of ${USER_ROLES.join(', ')}\n`);
    return 2;
  }
  const config = loadAccountsConfigForCli(values.config ?? DEFAULT_CONFIG_PATH, io);
  if (!config) return 2;

  let store: Store | null = null;
  try {
    store = openStoreForAccounts(config);
    if (action === 'list') {
      const tokens = listApiTokens(store.db);
      if (tokens.length === 0) {
        io.stdout.write('no API tokens yet: create one with `pairwatch token create NAME --role viewer`\n');
        return 0;
      }
      const width = Math.max(4, ...tokens.map((t) => t.name.length));
      io.stdout.write(`${'NAME'.padEnd(width)}  ROLE      CREATED (UTC)             STATUS\n`);
      for (const t of tokens) {
        const status = t.revokedAt === null ? 'live' : `revoked ${new Date(t.revokedAt).toISOString()}`;
        io.stdout.write(`${t.name.padEnd(width)}  ${t.role.padEnd(8)}  ${new Date(t.createdAt).toISOString()}  ${status}\n`);
      }
      return 0;
    }
    const tokenName = name!;
    if (action === 'create') {
      const token = newApiToken();
      const created = insertApiToken(store.db, { name: tokenName, tokenHash: sha256Hex(token), role, createdAt: Date.now() });
      if (!created) {
        const existing = findApiTokenByName(store.db, tokenName);
        io.stderr.write(
          `pairwatch token create: the name "${tokenName}" is taken${existing?.revokedAt !== null ? ' by a revoked token (names are kept for the audit trail)' : ''}; choose another\n`,
        );
        return 1;
      }
      io.stderr.write(`API token "${tokenName}" (${role}) created. Copy it now: it is shown only this once.\n`);
      io.stdout.write(`${token}\n`);
      return 0;
    }
    if (!revokeApiToken(store.db, tokenName, Date.now())) {
      const existing = findApiTokenByName(store.db, tokenName);
      io.stderr.write(`pairwatch token revoke: ${existing ? `"${tokenName}" was revoked already` : `no token is named "${tokenName}"`}\n`);
      return 1;
    }
    io.stdout.write(`API token "${tokenName}" revoked; it stops working at once\n`);
    return 0;
  } finally {
    store?.close();
  }
} });

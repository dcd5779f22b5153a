import { resolve } from 'node:path';
import { parseArgs } from 'node:util';
import type { SiteConfig } from '../config/schema.js';
import { openStore, type Store } from '../store/openStore.js';
import { deleteUser, findUserByName, insertUser, listUsers, updateUserPassword, updateUserRole, USER_ROLES, type UserRole, deleteWebSessionsForUser } from '../store/accountRepos.js';
import { accountNameProblem } from '../web/auth/accountName.js';
import { hashPassword, passwordProblem } from '../web/auth/passwordHash.js';
import { isUserRole } from '../web/auth/roles.js';
import type { CliIo } from './cliTypes.js';
import { defineCommand, UsageError } from './defineCommand.js';
import { loadAccountsConfigForCli } from './loadAccountsConfig.js';
import { DEFAULT_CONFIG_PATH } from './loadConfigForCli.js';

const PROMPT_NOTE = 'Without --password-stdin the password is asked for on the terminal, twice, without echo.\n';
const SUBCOMMANDS = {
  add: `usage: pairwatch user add NAME --role viewer|operator|admin [--password-stdin] [--config FILE]\n  Adds a person who may sign in. ${PROMPT_NOTE}`,
  passwd: `usage: pairwatch user passwd NAME [--password-stdin] [--config FILE]\n  Sets a new password and ends that user's browser sessions. ${PROMPT_NOTE}`,
  role: 'usage: pairwatch user role NAME --role viewer|operator|admin [--config FILE]\n  Changes what the user may do: viewers read, operators also acknowledge and shelve, admins also manage users.\n',
  list: 'usage: pairwatch user list [--config FILE]\n  Lists the users, their roles and when they were added.\n',
  remove: 'usage: pairwatch user remove NAME [--config FILE]\n  Removes the user and ends their sessions.\n',
} as const;
const USAGE = `usage: pairwatch user add|passwd|role|list|remove …
${Object.values(SUBCOMMANDS)
  .map((u) => `  ${u.split('\n')[0]!.replace('usage: ', '')}`)
  .join('\n')}
${PROMPT_NOTE}pairwatch user SUBCOMMAND --help shows one subcommand.
`;

const UsageProblem = UsageError;

/** Reads the password: the first line of stdin, or typed twice at a terminal without echo. */
export async function readNewPassword(io: CliIo, fromStdin: boolean): Promise<string> {
  if (fromStdin) {
    let text = '';
    for await (const chunk of io.stdin) text += typeof chunk === 'string' ? chunk : (chunk as Buffer).toString('utf8');
    return (text.split(/\r?\n/)[0] ?? '').replace(/\r$/, '');
  }
  const tty = io.stdin as NodeJS.ReadStream;
  if (!tty.isTTY || typeof tty.setRawMode !== 'function') {
    throw new UsageProblem('no terminal to ask for the password on; pipe it in with --password-stdin');
  }
  const first = await promptHidden(io, 'New password: ');
  const second = await promptHidden(io, 'Again: ');
  if (first !== second) throw new UsageProblem('the two passwords differ; nothing was changed');
  return first;
}

function promptHidden(io: CliIo, prompt: string): Promise<string> {
  const tty = io.stdin as NodeJS.ReadStream;
  io.stderr.write(prompt);
  return new Promise((resolvePassword, reject) => {
    let typed = '';
    tty.setRawMode(true);
    tty.resume();
    const finish = (error: Error | null) => {
      tty.setRawMode(false);
      tty.pause();
      tty.off('data', onData);
      io.stderr.write('\n');
      if (error) reject(error);
      else resolvePassword(typed);
    };
    const onData = (chunk: Buffer | string) => {
      for (const ch of chunk.toString()) {
        if (ch === '\r' || ch === '\n') return finish(null);
        if (ch === '\u0003' || ch === '\u0004') return finish(new UsageProblem('cancelled; nothing was changed'));
        if (ch === '\u007f' || ch === '\b') typed = typed.slice(0, -1);
        else if (ch >= ' ') typed += ch;
      }
    };
    tty.on('data', onData);
  });
}

function requireName(name: string | undefined): string {
  if (!name) throw new UsageProblem('a user NAME is needed');
  const problem = accountNameProblem(name);
  if (problem) throw new UsageProblem(`NAME ${problem}`);
  return name;
}

function requireRoleOption(role: string | undefined): UserRole {
  if (role === undefined) throw new UsageProblem(`--role is needed: one of ${USER_ROLES.join(', ')}`);
  if (!isUserRole(role)) throw new UsageProblem(`--role "${role}" is not one of ${USER_ROLES.join(', ')}`);
  return role;
}

async function newPasswordHash(io: CliIo, fromStdin: boolean) {
  const password = await readNewPassword(io, fromStdin);
  const problem = passwordProblem(password);
  if (problem) throw new UsageProblem(`the password ${problem}`);
  return hashPassword(password);
}

/** Opens the site's database beside a running daemon (no lock: this only touches the user tables). */
export function openStoreForAccounts(config: Pick<SiteConfig, 'storage'> | { storage: { path: string } }): Store {
  return openStore({ path: resolve(config.storage.path), lock: false });
}

/** `pairwatch user …`: web users, stored in the site database with scrypt password hashes. */
export const userCommand = defineCommand({ name: 'user', usage: USAGE, subcommands: SUBCOMMANDS, run: async (argv, io) => {
  const { values, positionals } = parseArgs({
    args: argv,
    allowPositionals: true,
    options: {
      config: { type: 'string', default: DEFAULT_CONFIG_PATH },
      role: { type: 'string' },
      'password-stdin': { type: 'boolean', default: false },
    },
  });
  const [action, name, ...extra] = positionals;
  if (!action) throw new UsageError('give a subcommand: add, passwd, role, list or remove');
  if (!(action in SUBCOMMANDS)) throw new UsageError(`unknown subcommand "${action}"`);
  const usageOf = SUBCOMMANDS[action as keyof typeof SUBCOMMANDS];
  const subUsage = (message: string) => {
    io.stderr.write(`pairwatch user ${action}: ${message}\n\n${usageOf}`);
    return 2;
  };
  if (extra.length > 0) return subUsage(`unexpected argument "${extra[0]}"`);
  if (action !== 'list' && !name) return subUsage('a user NAME is needed');
  const config = loadAccountsConfigForCli(values.config ?? DEFAULT_CONFIG_PATH, io);
  if (!config) return 2;
  const fromStdin = values['password-stdin'] ?? false;

  let store: Store | null = null;
  try {
    if (action === 'list') {
      store = openStoreForAccounts(config);
      const users = listUsers(store.db);
      if (users.length === 0) {
        io.stdout.write('no users yet: add one with `pairwatch user add NAME --role admin`\n');
        return 0;
      }
      const width = Math.max(4, ...users.map((u) => u.name.length));
      io.stdout.write(`${'NAME'.padEnd(width)}  ROLE      CREATED (UTC)\n`);
      for (const u of users) io.stdout.write(`${u.name.padEnd(width)}  ${u.role.padEnd(8)}  ${new Date(u.createdAt).toISOString()}\n`);
      return 0;
    }

    const userName = requireName(name);
    if (action === 'add') {
      const role = requireRoleOption(values.role);
      store = openStoreForAccounts(config);
      if (findUserByName(store.db, userName)) {
        io.stderr.write(`pairwatch user add: a user named "${userName}" exists already (change the password with \`user passwd\`)\n`);
        return 1;
      }
      const { hash, salt } = await newPasswordHash(io, fromStdin);
      if (!insertUser(store.db, { name: userName, role, passwordHash: hash, passwordSalt: salt, createdAt: Date.now() })) {
        io.stderr.write(`pairwatch user add: a user named "${userName}" exists already\n`);
        return 1;
      }
      io.stdout.write(`user "${userName}" added with the ${role} role\n`);
      return 0;
    }

    store = openStoreForAccounts(config);
    const user = findUserByName(store.db, userName);
    if (!user) {
      io.stderr.write(`pairwatch user ${action}: no user is named "${userName}" (see \`pairwatch user list\`)\n`);
      return 1;
    }
    if (action === 'passwd') {
      const { hash, salt } = await newPasswordHash(io, fromStdin);
      const db = store.db;
      db.transaction(() => {
        updateUserPassword(db, userName, hash, salt);
        // A new password signs the user out everywhere: an old session may be why it was changed.
        deleteWebSessionsForUser(db, user.id);
      })();
      io.stdout.write(`password of "${userName}" changed; their browser sessions were ended\n`);
      return 0;
    }
    if (action === 'role') {
      const role = requireRoleOption(values.role);
      updateUserRole(store.db, userName, role);
      io.stdout.write(`user "${userName}" now has the ${role} role\n`);
      return 0;
    }
    deleteUser(store.db, userName);
    io.stdout.write(`user "${userName}" removed, and their sessions ended\n`);
    return 0;
  } catch (err) {
    if (err instanceof UsageProblem) {
      io.stderr.write(`pairwatch user ${action}: ${err.message}\n`);
      return 2;
    }
    throw err;
  } finally {
    store?.close();
  }
} });

import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { StoreError, describeError } from './storeError.js';

export interface Migration {
  version: number;
  /** File name, e.g. 001_core.sql. */
  name: string;
  sql: string;
}

/** Numbered files only (`NNN_words.sql`); anything else in the folder is ignored, not guessed at. */
const MIGRATION_FILE = /^(\d{3,})_[A-Za-z0-9_-]+\.sql$/;

export function readMigrations(dir: string): Migration[] {
  let names: string[];
  try {
    names = readdirSync(dir);
  } catch (error) {
    throw new StoreError('PW_STORE_NO_MIGRATIONS', `cannot read the migrations folder ${dir}: ${describeError(error)}`, {
      cause: error,
    });
  }
  const migrations: Migration[] = [];
  const seen = new Map<number, string>();
  for (const name of names) {
    const match = MIGRATION_FILE.exec(name);
    if (!match?.[1]) continue;
    const version = Number(match[1]);
    const clash = seen.get(version);
    if (clash) throw new StoreError('PW_STORE_NO_MIGRATIONS', `migrations ${clash} and ${name} have the same number ${version}`);
    seen.set(version, name);
    migrations.push({ version, name, sql: readFileSync(join(dir, name), 'utf8') });
  }
  if (migrations.length === 0) throw new StoreError('PW_STORE_NO_MIGRATIONS', `no NNN_name.sql files in ${dir}`);
  return migrations.sort((a, b) => a.version - b.version);
}

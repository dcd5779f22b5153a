import type { SqliteDatabase } from './openDatabase.js';

/** Small facts kept between runs (last daily report, last retention run, …). Values are text; callers own the format. */
export interface KvRepo {
  get(key: string): string | null;
  set(key: string, value: string): void;
  delete(key: string): void;
}

export function createKvRepo(db: SqliteDatabase): KvRepo {
  const get = db.prepare('SELECT value FROM kv WHERE key = ?').pluck();
  const set = db.prepare('INSERT INTO kv (key, value) VALUES (?, ?) ON CONFLICT (key) DO UPDATE SET value = excluded.value');
  const remove = db.prepare('DELETE FROM kv WHERE key = ?');
  return {
    get(key) {
      return (get.get(key) as string | undefined) ?? null;
    },
    set(key, value) {
      set.run(key, value);
    },
    delete(key) {
      remove.run(key);
    },
  };
}

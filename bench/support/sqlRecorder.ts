import Database from 'better-sqlite3';
import type { SqliteDatabase } from '../../src/store/openDatabase.js';

/**
 * Records every statement the code runs on any better-sqlite3 connection in this process — its SQL
 * text, the method (run/get/all) and the bound values — including the BEGIN/COMMIT that
 * `db.transaction` issues and the statements behind `db.pragma`, because all of them go through
 * `Statement.prototype` (and `db.exec`, recorded too). The ingest bench replays the recording on a twin database with each
 * statement prepared once: "the same writes, with nothing around them", a ceiling for the store's share.
 */
export interface SqlOp {
  sql: string;
  method: 'run' | 'get' | 'all' | 'exec';
  args: unknown[];
}

type StatementMethod = (this: Database.Statement, ...args: unknown[]) => unknown;

export function recordSql(work: () => void): SqlOp[] {
  const probe = new Database(':memory:');
  const proto = Object.getPrototypeOf(probe.prepare('SELECT 1')) as Record<'run' | 'get' | 'all', StatementMethod>;
  probe.close();
  const ops: SqlOp[] = [];
  const originals = { run: proto.run, get: proto.get, all: proto.all };
  for (const method of ['run', 'get', 'all'] as const) {
    const original = originals[method];
    proto[method] = function recorded(this: Database.Statement, ...args: unknown[]) {
      ops.push({ sql: this.source, method, args: args.map((a) => (a !== null && typeof a === 'object' ? { ...a } : a)) });
      return original.apply(this, args);
    };
  }
  const dbProto = Database.prototype as unknown as { exec: (this: Database.Database, sql: string) => unknown };
  const originalExec = dbProto.exec;
  dbProto.exec = function recordedExec(this: Database.Database, sql: string) {
    ops.push({ sql, method: 'exec', args: [] });
    return originalExec.call(this, sql);
  };
  try {
    work();
  } finally {
    Object.assign(proto, originals);
    dbProto.exec = originalExec;
  }
  return ops;
}

/** Replays a recording on `db`, each distinct SQL text prepared once, in the recorded order. */
export function replaySql(db: SqliteDatabase, ops: readonly SqlOp[]): void {
  const prepared = new Map<string, Database.Statement>();
  for (const op of ops) {
    if (op.method === 'exec') {
      db.exec(op.sql);
      continue;
    }
    // SQLite applies a PRAGMA while compiling it: one kept and run again would do nothing.
    const isPragma = /^\s*PRAGMA\b/i.test(op.sql);
    let statement = isPragma ? undefined : prepared.get(op.sql);
    if (statement === undefined) {
      statement = db.prepare(op.sql);
      if (!isPragma) prepared.set(op.sql, statement);
    }
    // db.pragma() reads even a pragma that returns nothing; a plain statement of it must be run().
    if (op.method === 'run' || !statement.reader) statement.run(...op.args);
    else if (op.method === 'get') statement.get(...op.args);
    else statement.all(...op.args);
  }
}

/** How many recorded statements begin a transaction: the commits the path makes. */
export function countCommits(ops: readonly SqlOp[]): number {
  return ops.filter((op) => /^BEGIN\b/i.test(op.sql)).length;
}

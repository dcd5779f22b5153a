import { copyFileSync, mkdirSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { defaultMigrationsDir, openDatabase } from '../../src/store/openDatabase.js';
import { getOutboxRow } from '../../src/store/outboxRepo.js';
import { makeTempDir } from '../helpers/tempDir.js';

/**
 * Migration 070 rebuilds the outbox (issue 16 item 4: status 'dropped', reminder, refused). A database
 * written before it, with mail still waiting and mail already sent, must come through whole: the
 * upgrade happens exactly when a site updates after an outage, with a backlog in the outbox.
 */
const REBUILD = '070_outbox_backlog.sql';

describe('outbox rebuild (migration 070)', () => {
  let tmp: ReturnType<typeof makeTempDir>;
  let before: string;
  beforeEach(() => {
    tmp = makeTempDir('pw-store-outbox-');
    // The migrations as a site had them before the rebuild.
    before = join(tmp.dir, 'before');
    mkdirSync(before);
    for (const name of readdirSync(defaultMigrationsDir()).filter((n) => n.endsWith('.sql') && n < REBUILD)) {
      copyFileSync(join(defaultMigrationsDir(), name), join(before, name));
    }
  });
  afterEach(() => tmp.cleanup());

  it('keeps every row and column value, adds the new columns as 0, and lets only pending, sent and dropped in', () => {
    const path = join(tmp.dir, 'site.db');
    const old = openDatabase(path, { migrationsDir: before }).db;
    const insert = old.prepare(
      `INSERT INTO outbox (message_id, kind, priority, recipients_json, subject, text_body, html_body, headers_json, alarm_ids_json,
         created_at, status, attempts, next_attempt_at, last_error, sent_at) VALUES (?, 'notice', 'alarm', '["office@example.org"]', ?, 'text', '<p>html</p>',
         '{"From":"monitor@example.org"}', '[]', '2026-12-01T03:00:00.000Z', ?, ?, '2026-12-01T03:15:00.000Z', ?, ?)`,
    );
    insert.run('<waiting@example.org>', 'Waiting', 'pending', 4, 'cannot connect', null);
    insert.run('<sent@example.org>', 'Sent', 'sent', 1, null, '2026-12-01T03:00:01.000Z');
    const columnsBefore = old.prepare('SELECT * FROM outbox ORDER BY id').all();
    old.close();

    const { db, applied } = openDatabase(path);
    try {
      expect(applied).toContain(70);
      const after = db.prepare('SELECT * FROM outbox ORDER BY id').all() as Array<Record<string, unknown>>;
      expect(after).toEqual(columnsBefore.map((row) => ({ ...(row as object), reminder: 0, refused: 0 })));
      expect(getOutboxRow(db, 1)).toMatchObject({ status: 'pending', attempts: 4, lastError: 'cannot connect', reminder: false, refused: false, from: 'monitor@example.org' });
      // The pending index is there again under its name.
      expect(db.prepare("SELECT name FROM sqlite_master WHERE type = 'index' AND tbl_name = 'outbox'").pluck().all()).toContain('outbox_pending');
      db.prepare("UPDATE outbox SET status = 'dropped' WHERE id = 1").run();
      expect(() => db.prepare("UPDATE outbox SET status = 'lost' WHERE id = 1").run()).toThrow(/CHECK constraint failed/);
      expect(() => db.prepare('UPDATE outbox SET reminder = 2 WHERE id = 1').run()).toThrow(/CHECK constraint failed/);
    } finally {
      db.close();
    }
  });
});

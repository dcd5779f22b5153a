import type { SiteConfig } from '../config/schema.js';
import { CONDITION_TEXT } from '../model/condition.js';
import { escapeHtml, PRIORITY_TAG } from '../notify/mailLayout.js';
import { formatSiteAndUtc } from '../notify/formatSiteTime.js';
import type { OutboxMessage } from '../model/outboxMessage.js';
import type { StorageFailure } from '../store/createDurableWriter.js';

/**
 * The one mail that cannot go through the outbox: the outbox lives in the database that is failing.
 * Sent straight to the transport, once per failure, best effort.
 */
export function composeStorageAlert(config: SiteConfig, failure: StorageFailure, at: number, to: string[], messageId: string): OutboxMessage {
  const { words, check } = CONDITION_TEXT['storage-failing'];
  const when = formatSiteAndUtc(at, config.site.timezone);
  const lines = [
    `${config.site.name}: ${words}.`,
    `Since ${when}. SQLite said: ${failure.message} (${failure.sqliteCode}).`,
    'The monitor keeps classifying loops and shows them on the board; what it could not write is held in memory and written when the disk takes it again.',
    'Mail about other alarms waits in the database, so until this is fixed this may be the only mail you get.',
    `What to check: ${check}`,
  ];
  return {
    messageId,
    kind: 'notice',
    priority: 'system',
    from: config.mail.from,
    to,
    subject: `${PRIORITY_TAG.system} ${config.site.name}: storage failing`,
    text: `${lines.join('\n\n')}\n`,
    html: `<!doctype html><html><body>${lines.map((l) => `<p>${escapeHtml(l)}</p>`).join('')}</body></html>`,
    headers: { 'Auto-Submitted': 'auto-generated' },
    alarmIds: [],
  };
}

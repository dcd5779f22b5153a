import { dirname, join, resolve } from 'node:path';
import type { SiteConfig } from '../config/schema.js';

/** Where .eml files go without SMTP: mail.drop_folder, else `outbox-mail` beside the database. Relative paths are from the working directory, like storage.path. */
export function dropFolderFor(config: SiteConfig): string {
  return resolve(config.mail.drop_folder ?? join(dirname(config.storage.path), 'outbox-mail'));
}

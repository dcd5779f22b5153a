import { chmodSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { makePrivateDir } from '../store/privateFiles.js';
import { randomBytes } from 'node:crypto';
import { join } from 'node:path';
import { NotifyError } from './notifyError.js';

/** File in the data folder holding the acknowledge-link signing key (hex, one line). */
export const ACK_SECRET_FILE = 'ack-link.key';
const SECRET_BYTES = 32;

/**
 * Reads the signing key, creating it at first start. Created exclusively ('wx') so two processes
 * starting at once cannot each write a different key; kept owner-only (0600).
 */
export function loadOrCreateAckSecret(dataDir: string): Buffer {
  const file = join(dataDir, ACK_SECRET_FILE);
  makePrivateDir(dataDir);
  try {
    writeFileSync(file, `${randomBytes(SECRET_BYTES).toString('hex')}\n`, { flag: 'wx', mode: 0o600 });
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code !== 'EEXIST') {
      throw new NotifyError('PW_ACK_SECRET_INVALID', `cannot create ${file}: ${(err as Error).message}`);
    }
  }
  let text: string;
  try {
    text = readFileSync(file, 'utf8').trim();
    // Someone may have copied the file with a looser mode; the key must not be readable by others.
    if ((statSync(file).mode & 0o077) !== 0) chmodSync(file, 0o600);
  } catch (err) {
    throw new NotifyError('PW_ACK_SECRET_INVALID', `cannot read ${file}: ${(err as Error).message}`);
  }
  if (!/^[0-9a-f]{64}$/i.test(text)) {
    throw new NotifyError(
      'PW_ACK_SECRET_INVALID',
      `${file} does not hold a 64-digit hex key; delete it to make a new one (acknowledge links already sent stop working)`,
    );
  }
  return Buffer.from(text, 'hex');
}

import { readFileSync } from 'node:fs';
import { readYamlMapping } from '../config/readYaml.js';
import type { CliIo } from './cliTypes.js';
import { loadEstateConfigForCli } from './estateCommand.js';
import { loadConfigForCli } from './loadConfigForCli.js';

/**
 * For `user` and `token`: a site config, or an estate config (a file with a top-level `estate:`),
 * since both keep their own users and tokens. Only the database path is needed.
 */
export function loadAccountsConfigForCli(file: string, io: CliIo): { storage: { path: string } } | null {
  let isEstate = false;
  try {
    const read = readYamlMapping(readFileSync(file, 'utf8'), 'keys');
    isEstate = read.ok && 'estate' in read.value;
  } catch {
    // unreadable: the site loader says so in its own words
  }
  return isEstate ? loadEstateConfigForCli(file, io) : loadConfigForCli(file, io);
}

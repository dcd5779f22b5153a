import { parseArgs } from 'node:util';
import { findApiTokenByName, insertApiToken, listApiTokens, revokeApiToken, USER_ROLES_FOR_TOKENS } from './tokenCommandDeps.js';

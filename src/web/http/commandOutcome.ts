import type { CommandResult } from '../webPorts.js';
import { WebError } from '../webErrors.js';

/** Turns a refused command into the matching answer: unknown ids 404, an action the state forbids 409, one not recorded 500. */
export function assertCommandOk(result: CommandResult, id: string | number): void {
  if (result.ok) return;
  switch (result.code) {
    case 'PW_ALARM_NOT_FOUND':
      throw new WebError('PW_WEB_NOT_FOUND', { what: 'alarm', id: String(id) }, { field: 'id' });
    case 'PW_LOOP_NOT_FOUND':
      throw new WebError('PW_WEB_NOT_FOUND', { what: 'loop', id: String(id) }, { field: 'id' });
    case 'PW_ALARM_BAD_ACTION':
    case 'PW_ACK_LINK_USED':
      throw new WebError('PW_WEB_BAD_ACTION', { reason: result.message });
    case 'PW_ACTION_NOT_RECORDED':
      throw new WebError('PW_WEB_NOT_RECORDED', {});
  }
}

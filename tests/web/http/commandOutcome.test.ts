import { describe, expect, it } from 'vitest';
import { assertCommandOk } from '../../../src/web/http/commandOutcome.js';
import type { WebError } from '../../../src/web/webErrors.js';
import type { CommandResult } from '../../../src/web/webPorts.js';

/** What the API answers for each way a command can be refused (status codes per RFC 9110 §15). */
describe('assertCommandOk', () => {
  const refusal = (code: Extract<CommandResult, { ok: false }>['code']) => {
    try {
      assertCommandOk({ ok: false, code, message: 'the reason' }, 7);
    } catch (error) {
      return error as WebError;
    }
    throw new Error('no refusal');
  };

  it('an accepted command passes', () => {
    expect(() => assertCommandOk({ ok: true }, 7)).not.toThrow();
  });

  it('unknown ids are 404, refused actions 409 with the reason', () => {
    expect(refusal('PW_ALARM_NOT_FOUND').status).toBe(404);
    expect(refusal('PW_LOOP_NOT_FOUND').status).toBe(404);
    expect(refusal('PW_ALARM_BAD_ACTION')).toMatchObject({ status: 409, message: 'the reason' });
    expect(refusal('PW_ACK_LINK_USED')).toMatchObject({ status: 409, message: 'the reason' });
  });

  it('an action whose commit was rolled back is a 500 that says it has not happened', () => {
    const error = refusal('PW_ACTION_NOT_RECORDED');
    expect(error.status).toBe(500);
    expect(error.message).toBe('the action could not be recorded, so it has not happened; the log has the details');
  });
});

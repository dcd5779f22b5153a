import type { CheckResult, CheckStatus } from './checkResult.js';

const LABEL = { ok: 'ok  ', warn: 'warn', fail: 'FAIL' } as const satisfies Record<CheckStatus, string>;

/** `ok    name: finding`, and for a problem a second, indented `fix:` line. */
export function formatCheckResult(result: CheckResult): string {
  const head = `${LABEL[result.status]}  ${result.name}: ${result.finding}`;
  return result.fix ? `${head}\n      fix: ${result.fix}` : head;
}

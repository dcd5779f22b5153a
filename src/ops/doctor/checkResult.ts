/** One line of `pairwatch doctor`: a check's name, its verdict, what was found, and how to fix a problem. */
export const CHECK_STATUSES = ['ok', 'warn', 'fail'] as const;
export type CheckStatus = (typeof CHECK_STATUSES)[number];

export interface CheckResult {
  name: string;
  status: CheckStatus;
  finding: string;
  /** Given for every failure and for warnings that have a remedy. */
  fix?: string;
}

export const passed = (name: string, finding: string): CheckResult => ({ name, status: 'ok', finding });
export const warned = (name: string, finding: string, fix?: string): CheckResult =>
  fix === undefined ? { name, status: 'warn', finding } : { name, status: 'warn', finding, fix };
export const failed = (name: string, finding: string, fix: string): CheckResult => ({ name, status: 'fail', finding, fix });

const LABEL = { ok: 'ok  ', warn: 'warn', fail: 'FAIL' } as const satisfies Record<CheckStatus, string>;

/** `ok    name: finding`, and for a problem a second, indented `fix:` line. */
export function formatCheckResult(result: CheckResult): string {
  const head = `${LABEL[result.status]}  ${result.name}: ${result.finding}`;
  return result.fix ? `${head}\n      fix: ${result.fix}` : head;
}

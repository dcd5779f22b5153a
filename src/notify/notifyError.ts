/** Error codes of the notification layer; each error carries one and a message a user can act on. */
export const NOTIFY_ERROR_CODES = [
  'PW_MAIL_PASS_MISSING',
  'PW_MAIL_SEND_FAILED',
  'PW_MAIL_REJECTED',
  'PW_ACK_SECRET_INVALID',
  'PW_BAD_REPORT_TIME',
] as const;
export type NotifyErrorCode = (typeof NOTIFY_ERROR_CODES)[number];

export class NotifyError extends Error {
  constructor(
    readonly code: NotifyErrorCode,
    message: string,
  ) {
    super(message);
    this.name = 'NotifyError';
  }
}

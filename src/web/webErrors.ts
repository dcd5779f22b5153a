/**
 * Every error the web server can answer with: a stable code, an HTTP status and a message template.
 * Handlers throw `WebError`s; the one error handler turns them into
 * `{ error: { code, message, field } }` for the API or a plain page for people. Nothing else reaches
 * the client: unexpected exceptions become PW_WEB_INTERNAL without their stack.
 */

type Params = Record<string, string | number>;

interface ErrorSpec {
  status: number;
  /** `{name}` placeholders are filled from the params. */
  template: string;
}

export const WEB_ERRORS = {
  PW_WEB_BAD_INPUT: { status: 400, template: '{field}: {reason}' },
  PW_WEB_BAD_JSON: { status: 400, template: 'body: not valid JSON ({reason})' },
  PW_WEB_BODY_TOO_LARGE: { status: 413, template: 'body: larger than the {limit} bytes this server accepts' },
  PW_WEB_UNSUPPORTED_MEDIA: {
    status: 415,
    template: 'content-type: "{type}" is not accepted here; send application/json (API) or a form',
  },
  PW_WEB_UNAUTHENTICATED: {
    status: 401,
    template: 'sign in first, or send an API token as "Authorization: Bearer <token>"',
  },
  PW_WEB_BAD_TOKEN: { status: 401, template: 'the API token is unknown or has been revoked' },
  PW_WEB_FORBIDDEN: { status: 403, template: 'this needs the {needed} role; {who} has the {role} role' },
  PW_WEB_CSRF: {
    status: 403,
    template: 'the form was out of date or came from another site ({reason}); reload the page and try again',
  },
  PW_WEB_BAD_LOGIN: { status: 401, template: 'wrong name or password' },
  PW_WEB_RATE_LIMITED: {
    status: 429,
    template: 'too many failed sign-ins from here or for this name; wait {seconds} s and try again',
  },
  PW_WEB_BUSY: { status: 503, template: 'the server is busy checking other sign-ins; wait {seconds} s and try again' },
  PW_WEB_WRONG_HOST: {
    status: 421,
    template: 'host: "{host}" is not a name this server answers to; add it to web.allowed_hosts if it should be',
  },
  PW_WEB_NOT_FOUND: { status: 404, template: 'no {what} has id "{id}"' },
  PW_WEB_NO_ROUTE: { status: 404, template: 'nothing here: {method} {path}' },
  PW_WEB_BAD_ACTION: { status: 409, template: '{reason}' },
  PW_WEB_NOT_RECORDED: { status: 500, template: 'the action could not be recorded, so it has not happened; the log has the details' },
  PW_WEB_TLS_UNREADABLE: { status: 500, template: '{field}: cannot read {file}: {reason}' },
  PW_WEB_INTERNAL: {
    status: 500,
    template: 'something went wrong inside the monitor; the log has the details (reference {ref})',
  },
} as const satisfies Record<string, ErrorSpec>;

export type WebErrorCode = keyof typeof WEB_ERRORS;

function fill(template: string, params: Params): string {
  return template.replace(/\{(\w+)\}/g, (whole, name: string) => (name in params ? String(params[name]) : whole));
}

export class WebError extends Error {
  readonly code: WebErrorCode;
  readonly status: number;
  /** The request field at fault (a body key, query key, path parameter or header), when there is one. */
  readonly field: string | null;
  /** Extra headers to send with the error (Retry-After, WWW-Authenticate). */
  readonly headers: Readonly<Record<string, string>>;

  constructor(code: WebErrorCode, params: Params = {}, options: { field?: string; headers?: Record<string, string> } = {}) {
    const spec: ErrorSpec = WEB_ERRORS[code];
    super(fill(spec.template, params));
    this.name = 'WebError';
    this.code = code;
    this.status = spec.status;
    this.field = options.field ?? (typeof params.field === 'string' ? params.field : null);
    this.headers = options.headers ?? {};
  }

  toBody(): ErrorBody {
    return { error: { code: this.code, message: this.message, field: this.field } };
  }
}

export interface ErrorBody {
  error: { code: string; message: string; field: string | null };
}

/** A 400 naming the field and the reason, the shape every bad-input answer takes. */
export function badInput(field: string, reason: string): WebError {
  return new WebError('PW_WEB_BAD_INPUT', { field, reason }, { field });
}

export function notFound(what: string, id: string | number, field = 'id'): WebError {
  return new WebError('PW_WEB_NOT_FOUND', { what, id: String(id) }, { field });
}

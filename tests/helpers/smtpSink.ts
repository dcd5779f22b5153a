import { SMTPServer } from 'smtp-server';
import { simpleParser, type ParsedMail } from 'mailparser';
import type { AddressInfo } from 'node:net';

export interface SmtpSink {
  port: number;
  messages: ParsedMail[];
  /** Envelope recipients per message, in arrival order. */
  envelopes: string[][];
  logins: string[];
  /** Whether each message came over TLS (after STARTTLS). */
  overTls: boolean[];
  /**
   * Errors of single client connections (a sender killed with -9 mid-session resets its socket).
   * smtp-server re-emits them on the server, where an unheard 'error' would crash the test process.
   */
  connectionErrors: Error[];
  close(): Promise<void>;
}

export interface SmtpSinkOptions {
  port?: number;
  /** Require AUTH with `user`/`pass`. Default true; false takes mail from anyone, as a relay on the LAN would. */
  auth?: boolean;
  user?: string;
  pass?: string;
  /** Offer STARTTLS, with smtp-server's built-in self-signed certificate unless `certificate` is given. Default false. */
  starttls?: boolean;
  certificate?: { key: Buffer; cert: Buffer };
  /** Recipients the server refuses with 550, as a mailbox that does not exist. */
  rejectRecipients?: string[];
  /** Called with each parsed message before the server answers 250. */
  onMessage?: (mail: ParsedMail) => void;
}

/**
 * A real SMTP server (smtp-server package) on 127.0.0.1, AUTH required unless told otherwise. Each
 * message is parsed with mailparser before the server answers 250, so once send() resolves the
 * message is here.
 */
export async function startSmtpSink(options: SmtpSinkOptions = {}): Promise<SmtpSink> {
  const authRequired = options.auth ?? true;
  const user = options.user ?? 'monitor';
  const pass = options.pass ?? 's3cret-pass';
  const messages: ParsedMail[] = [];
  const envelopes: string[][] = [];
  const logins: string[] = [];
  const overTls: boolean[] = [];
  const connectionErrors: Error[] = [];
  const server = new SMTPServer({
    authOptional: !authRequired,
    allowInsecureAuth: !options.starttls,
    disabledCommands: [...(options.starttls ? [] : ['STARTTLS']), ...(authRequired ? [] : ['AUTH'])],
    authMethods: ['PLAIN', 'LOGIN'],
    ...(options.certificate ?? {}),
    logger: false,
    onAuth(auth, _session, callback) {
      if (auth.username === user && auth.password === pass) {
        logins.push(auth.username ?? '');
        callback(null, { user: auth.username });
      } else callback(Object.assign(new Error('Invalid username or password'), { responseCode: 535 }));
    },
    onRcptTo(address, _session, callback) {
      if (options.rejectRecipients?.includes(address.address)) {
        const err = Object.assign(new Error('No such mailbox here'), { responseCode: 550 });
        callback(err);
      } else callback();
    },
    onData(stream, session, callback) {
      simpleParser(stream)
        .then((parsed) => {
          messages.push(parsed);
          envelopes.push(session.envelope.rcptTo.map((r) => r.address));
          overTls.push(session.secure === true);
          options.onMessage?.(parsed);
          callback();
        })
        .catch((err: Error) => callback(err));
    },
  });
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject);
    server.listen(options.port ?? 0, '127.0.0.1', () => resolve());
  });
  server.on('error', (err: Error) => connectionErrors.push(err));
  const port = (server.server.address() as AddressInfo).port;
  return {
    port,
    messages,
    envelopes,
    logins,
    overTls,
    connectionErrors,
    close: () => new Promise<void>((resolve) => server.close(() => resolve())),
  };
}

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
  close(): Promise<void>;
}

export interface SmtpSinkOptions {
  port?: number;
  user?: string;
  pass?: string;
  /** Offer STARTTLS with smtp-server's built-in self-signed certificate. Default false. */
  starttls?: boolean;
  /** Recipients the server refuses with 550, as a mailbox that does not exist. */
  rejectRecipients?: string[];
}

/**
 * A real SMTP server (smtp-server package) on 127.0.0.1 with AUTH required. Each message is parsed
 * with mailparser before the server answers 250, so once send() resolves the message is here.
 */
export async function startSmtpSink(options: SmtpSinkOptions = {}): Promise<SmtpSink> {
  const user = options.user ?? 'monitor';
  const pass = options.pass ?? 's3cret-pass';
  const messages: ParsedMail[] = [];
  const envelopes: string[][] = [];
  const logins: string[] = [];
  const overTls: boolean[] = [];
  const server = new SMTPServer({
    authOptional: false,
    allowInsecureAuth: !options.starttls,
    disabledCommands: options.starttls ? [] : ['STARTTLS'],
    authMethods: ['PLAIN', 'LOGIN'],
    logger: false,
    onAuth(auth, _session, callback) {
      if (auth.username === user && auth.password === pass) {
        logins.push(auth.username ?? '');
        callback(null, { user: auth.username });
      } else callback(new Error('Invalid username or password'));
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
          callback();
        })
        .catch((err: Error) => callback(err));
    },
  });
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject);
    server.listen(options.port ?? 0, '127.0.0.1', () => resolve());
  });
  const port = (server.server.address() as AddressInfo).port;
  return {
    port,
    messages,
    envelopes,
    logins,
    overTls,
    close: () => new Promise<void>((resolve) => server.close(() => resolve())),
  };
}

/** A port on 127.0.0.1 that nothing listens on (taken, then released): "the mail server is down". */
export async function freePort(): Promise<number> {
  const net = await import('node:net');
  return new Promise((resolve, reject) => {
    const probe = net.createServer();
    probe.once('error', reject);
    probe.listen(0, '127.0.0.1', () => {
      const { port } = probe.address() as AddressInfo;
      probe.close(() => resolve(port));
    });
  });
}

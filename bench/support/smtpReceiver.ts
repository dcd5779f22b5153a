import { performance } from 'node:perf_hooks';
import type { AddressInfo } from 'node:net';
import { simpleParser } from 'mailparser';
import { SMTPServer } from 'smtp-server';

/** One message as the receiving server saw it. */
export interface ReceivedMail {
  /** performance.now() when the end of DATA arrived and the server accepted the message. */
  acceptedMs: number;
  messageId: string | null;
  subject: string;
}

/**
 * A real SMTP server (the registry's smtp-server package) on 127.0.0.1, plain SMTP without AUTH or
 * STARTTLS: the bench measures the monitor, not a TLS handshake. Messages are parsed with
 * mailparser after they are accepted, so parsing never counts towards the delivery time.
 */
export async function startSmtpReceiver(onMail: (mail: ReceivedMail) => void): Promise<{ port: number; close(): Promise<void> }> {
  const server = new SMTPServer({
    authOptional: true,
    disabledCommands: ['STARTTLS', 'AUTH'],
    logger: false,
    // A reverse DNS lookup of 127.0.0.1 is the receiver's cost, not the monitor's.
    disableReverseLookup: true,
    onData(stream, _session, callback) {
      const chunks: Buffer[] = [];
      stream.on('data', (chunk: Buffer) => chunks.push(chunk));
      stream.on('end', () => {
        const acceptedMs = performance.now();
        callback();
        simpleParser(Buffer.concat(chunks))
          .then(
            (parsed) => ({ acceptedMs, messageId: parsed.messageId ?? null, subject: parsed.subject ?? '' }),
            () => ({ acceptedMs, messageId: null, subject: '' }),
          )
          .then(onMail)
          .catch((err: unknown) => process.stderr.write(`bench SMTP receiver: handling a message failed: ${(err as Error).message}\n`));
      });
    },
  });
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject);
    server.listen(0, '127.0.0.1', () => resolve());
  });
  // A sender that drops its connection mid-session is the sender's business; unheard, smtp-server's
  // re-emitted 'error' would end the bench.
  server.on('error', (err: Error) => process.stderr.write(`bench SMTP receiver: a connection failed: ${err.message}\n`));
  const { port } = server.server.address() as AddressInfo;
  return { port, close: () => new Promise<void>((resolve) => server.close(() => resolve())) };
}

import { randomUUID } from 'node:crypto';
import { hostname } from 'node:os';

/** Right-hand side for Message-IDs: the sender's mail domain, so ids are unique to this sender (RFC 5322 §3.6.4). */
export function messageIdDomain(from: string): string {
  const match = /@([A-Za-z0-9.-]+)>?\s*$/.exec(from);
  const domain = match?.[1];
  if (domain && domain !== 'localhost') return domain;
  // Stryker disable next-line StringLiteral: a running host always has a name; the fallback only keeps the id valid if it had none
  const host = hostname().replace(/[^A-Za-z0-9.-]/g, '') || 'localhost';
  return `${host}.invalid`;
}

/** `<uuid@pairwatch.domain>` — generated once per message; the outbox keeps it across retries. */
export function createMessageIdFactory(domain: string): () => string {
  return () => `<${randomUUID()}@pairwatch.${domain}>`;
}

import { dkimVerify, type DNSResolver } from 'mailauth';
import { DKIM_RESULTS, type AuthVerdict, type DkimResult } from './parsedReply.js';

/**
 * Who really sent a reply, as far as can be told: a DKIM signature verified here with mailauth
 * (RFC 6376), else the verdict the receiving provider wrote into Authentication-Results (RFC 8601).
 * A signature counts as a pass only when its domain is aligned with the From domain (relaxed
 * alignment, RFC 7489 §3.1.1): otherwise anyone could sign a forged From with their own domain.
 */
export interface AuthResultsEntry {
  authservId: string;
  results: Array<{ method: string; result: string }>;
}

/** RFC 8601 §2.2: `authserv-id [version]; method=result [reason] [props]; ...`; comments in (…) dropped. */
export function parseAuthenticationResults(value: string): AuthResultsEntry {
  const text = value.replace(/\([^()]*\)/g, ' ');
  const [head = '', ...rest] = text.split(';');
  const results: AuthResultsEntry['results'] = [];
  for (const part of rest) {
    const m = /^\s*([A-Za-z0-9_-]+)\s*=\s*([A-Za-z0-9_-]+)/.exec(part);
    if (m) results.push({ method: m[1]!.toLowerCase(), result: m[2]!.toLowerCase() });
  }
  return { authservId: head.trim().split(/\s+/)[0] ?? '', results };
}

const asDkim = (result: string): DkimResult => ((DKIM_RESULTS as readonly string[]).includes(result) ? (result as DkimResult) : 'neutral');

function aligned(signingDomain: string, fromDomain: string): boolean {
  const s = signingDomain.toLowerCase();
  const f = fromDomain.toLowerCase();
  return s === f || f.endsWith(`.${s}`) || s.endsWith(`.${f}`);
}

export interface AuthVerdictOptions {
  /** DNS for DKIM keys; tests pass their own so nothing leaves the machine. */
  resolver?: DNSResolver;
  now?: number;
}

/** `topmostAuthResults`: the first Authentication-Results field, the one the receiving server added. */
export async function readAuthVerdict(source: Buffer, from: string | null, topmostAuthResults: string | null, options: AuthVerdictOptions = {}): Promise<AuthVerdict> {
  const parts: string[] = [];
  let dkim: DkimResult = 'none';
  const fromDomain = from?.split('@')[1] ?? '';
  if (/^dkim-signature:/im.test(source.subarray(0, 64 * 1024).toString('latin1').split(/\r?\n\r?\n/)[0] ?? '')) {
    try {
      const verified = await dkimVerify(source, {
        ...(options.resolver ? { resolver: options.resolver } : {}),
        ...(options.now !== undefined ? { curTime: new Date(options.now) } : {}),
      });
      const results = verified.results ?? [];
      const best = results.find((r) => r.status.result === 'pass' && aligned(r.signingDomain, fromDomain)) ?? results[0];
      if (best) {
        const result = asDkim(best.status.result);
        const isAligned = aligned(best.signingDomain, fromDomain);
        dkim = result === 'pass' && !isAligned ? 'policy' : result;
        parts.push(`DKIM ${best.status.result} (${best.signingDomain}${result === 'pass' && !isAligned ? `, not aligned with ${fromDomain}` : ''}) by mailauth`);
      }
    } catch (err) {
      dkim = 'temperror';
      parts.push(`DKIM not verified: ${(err as Error).message}`);
    }
  }
  if (topmostAuthResults) {
    const entry = parseAuthenticationResults(topmostAuthResults);
    const said = entry.results.filter((r) => ['dkim', 'spf', 'dmarc'].includes(r.method));
    if (said.length > 0) parts.push(`Authentication-Results ${entry.authservId}: ${said.map((r) => `${r.method}=${r.result}`).join(' ')}`);
    const arDkim = said.find((r) => r.method === 'dkim');
    // The provider's own verdict stands in only where no signature could be checked here.
    if (dkim === 'none' && arDkim) dkim = asDkim(arDkim.result);
  }
  if (parts.length === 0) parts.push('no DKIM signature and no Authentication-Results');
  return { dkim, summary: parts.join('; ') };
}

import { createServer } from 'node:net';
import type { WebConfig } from '../../config/schema.js';
import type { CheckResult } from './checkResult.js';
import { failed, passed, warned } from './checkResult.js';

export type BindOutcome = { free: true } | { free: false; code: string; message: string };
export type HealthProbe = { answered: true; status: number; body: unknown } | { answered: false; message: string };

export interface WebPortDeps {
  /** Binds host:port for a moment and lets go again. */
  tryBind(host: string, port: number): Promise<BindOutcome>;
  /** GET /healthz; a JSON body is parsed, anything else is passed as text. */
  probeHealth(url: string): Promise<HealthProbe>;
}

export function parseListen(listen: string): { host: string; port: number } | null {
  const match = /^(\[[0-9a-fA-F:]+\]|[A-Za-z0-9.-]+):(\d{1,5})$/.exec(listen);
  if (!match) return null;
  const port = Number(match[2]);
  if (port < 1 || port > 65535) return null;
  return { host: match[1]!.replace(/^\[|\]$/g, ''), port };
}

/** Can the web server have its port, or is the pairwatch service already on it? */
export async function checkWebPort(web: WebConfig, deps: WebPortDeps): Promise<CheckResult> {
  const name = 'web port';
  const target = parseListen(web.listen);
  if (!target) return failed(name, `web.listen "${web.listen}" is not HOST:PORT`, 'write e.g. 127.0.0.1:8080');
  const bind = await deps.tryBind(target.host, target.port);
  if (bind.free) return passed(name, `${web.listen} is free for the web server`);

  if (bind.code === 'EADDRINUSE') {
    const scheme = web.tls ? 'https' : 'http';
    const host = target.host.includes(':') ? `[${target.host}]` : target.host;
    const probeHost = host === '0.0.0.0' ? '127.0.0.1' : host === '[::]' ? '[::1]' : host;
    const url = `${scheme}://${probeHost}:${target.port}/healthz`;
    const probe = await deps.probeHealth(url);
    if (probe.answered && isHealthBody(probe.body)) {
      if (probe.status === 200) return passed(name, `${web.listen} is in use by the running pairwatch service (/healthz: working)`);
      const reasons = probe.body.checks.filter((c) => !c.ok).map((c) => `${c.name}: ${c.reason ?? 'not working'}`);
      return warned(
        name,
        `${web.listen} is in use by the running pairwatch service, which reports trouble (/healthz ${probe.status}: ${reasons.join('; ') || 'no reason given'})`,
        'see the board and `journalctl -u pairwatch` for the cause',
      );
    }
    const who = probe.answered ? `something that is not pairwatch (/healthz answered ${probe.status})` : 'another program';
    return failed(name, `${web.listen} is taken by ${who}`, `stop that program or choose another port in web.listen (find it with: sudo ss -ltnp 'sport = :${target.port}')`);
  }
  if (bind.code === 'EACCES') {
    return failed(name, `may not listen on ${web.listen}: ports below 1024 need privileges`, 'use a port of 1024 or above in web.listen (8080 is usual)');
  }
  if (bind.code === 'EADDRNOTAVAIL' || bind.code === 'ENOTFOUND' || bind.code === 'EAI_AGAIN') {
    return failed(name, `this machine has no address ${target.host} (${bind.code})`, 'use 127.0.0.1, 0.0.0.0 or one of this machine\'s addresses in web.listen');
  }
  return failed(name, `cannot listen on ${web.listen}: ${bind.message}`, 'check web.listen');
}

function isHealthBody(body: unknown): body is { ok: boolean; checks: Array<{ name: string; ok: boolean; reason?: string | null }> } {
  if (body === null || typeof body !== 'object') return false;
  const b = body as { ok?: unknown; checks?: unknown };
  return typeof b.ok === 'boolean' && Array.isArray(b.checks);
}

export const defaultWebPortDeps: WebPortDeps = {
  tryBind: (host, port) =>
    new Promise((resolve) => {
      const server = createServer();
      server.once('error', (err: NodeJS.ErrnoException) => resolve({ free: false, code: err.code ?? 'EUNKNOWN', message: err.message }));
      server.listen({ host, port, exclusive: true }, () => server.close(() => resolve({ free: true })));
    }),
  probeHealth: async (url) => {
    try {
      const response = await fetch(url, { signal: AbortSignal.timeout(3000) });
      const text = await response.text();
      let body: unknown = text;
      try {
        body = JSON.parse(text);
      } catch {
        // not JSON: not our health endpoint
      }
      return { answered: true, status: response.status, body };
    } catch (err) {
      return { answered: false, message: (err as Error).message };
    }
  },
};

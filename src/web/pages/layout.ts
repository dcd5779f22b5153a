import type { Principal } from '../auth/principal.js';
import { html, type SafeHtml } from './html.js';

export interface PageFrame {
  title: string;
  siteName: string;
  principal: Principal | null;
  body: SafeHtml;
  /** Which nav entry is current. */
  section?: 'board' | 'history' | 'none';
  /** A one-line confirmation after a POST-redirect-GET ("Acknowledged."). */
  flash?: string | null;
  /** Page scripts, all from /static (the CSP allows no inline script). */
  scripts?: readonly string[];
  /** Without JavaScript, reload the page this often (seconds) so a wall-mounted board stays current. */
  noScriptRefreshSeconds?: number;
}

/** Said wherever people read the monitor: what it is, and what it is not. */
export const CAUTION_TEXT =
  'pairwatch watches property; it is not a life-safety system (no fire, gas or medical use). ' +
  'Wiring between buildings and any mains-side work is for a licensed electrician under your local codes.';

export function renderPage(frame: PageFrame): string {
  const { principal } = frame;
  const nav = (id: 'board' | 'history', href: string, label: string) =>
    html`<a href="${href}" class="nav-link"${frame.section === id ? html` aria-current="page"` : ''}>${label}</a>`;
  const account = principal
    ? html`<form method="post" action="/logout" class="signout">
        <input type="hidden" name="csrf" value="${principal.csrfToken ?? ''}">
        <span class="who">${principal.name} · ${principal.role}</span>
        <button type="submit" class="button button-quiet">Sign out</button>
      </form>`
    : '';
  return html`<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="color-scheme" content="light dark">
<meta name="referrer" content="no-referrer">
<title>${frame.title} · ${frame.siteName}</title>
<link rel="stylesheet" href="/static/site.css">
<link rel="icon" href="/static/icon.svg" type="image/svg+xml">
${frame.noScriptRefreshSeconds ? html`<noscript><meta http-equiv="refresh" content="${frame.noScriptRefreshSeconds}"></noscript>` : ''}
${(frame.scripts ?? []).map((src) => html`<script src="${src}" defer></script>`)}
</head>
<body>
<header class="top">
  <a href="/" class="site-name">${frame.siteName}</a>
  ${principal ? html`<nav class="nav" aria-label="Main">${nav('board', '/', 'Board')}${nav('history', '/history', 'History')}</nav>` : ''}
</header>
<main id="main">
${frame.flash ? html`<p class="flash" role="status">${frame.flash}</p>` : ''}
${frame.body}
</main>
<footer class="foot">
  ${account}
  <p class="caution">${CAUTION_TEXT}</p>
</footer>
</body>
</html>
`.value;
}

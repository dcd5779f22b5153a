import type { Principal } from '../auth/principal.js';
import { html, type SafeHtml } from './html.js';
import { renderPage } from './layout.js';

/** A plain page for refusals and errors: a heading, what happened, and where to go next. */
export function renderMessagePage(options: {
  siteName: string;
  principal: Principal | null;
  title: string;
  message: string;
  code?: string;
  links?: Array<{ href: string; label: string }>;
  extra?: SafeHtml;
}): string {
  const links = options.links ?? [{ href: '/', label: 'Back to the board' }];
  const body = html`<h1>${options.title}</h1>
<p class="problem">${options.message}</p>
${options.extra ?? ''}
${options.code ? html`<p class="note">Code: ${options.code}</p>` : ''}
<p>${links.map((l) => html`<a class="button" href="${l.href}">${l.label}</a> `)}</p>`;
  return renderPage({ title: options.title, siteName: options.siteName, principal: options.principal, body });
}

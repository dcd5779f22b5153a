import { html } from './html.js';
import { renderPage } from './layout.js';

export interface LoginPageData {
  siteName: string;
  /** The double-submit value also set in the pre-session cookie. */
  formToken: string;
  next: string;
  name?: string;
  problem?: string | null;
}

export function renderLoginPage(data: LoginPageData): string {
  const body = html`<h1>Sign in</h1>
${data.problem ? html`<p class="problem" role="alert">${data.problem}</p>` : ''}
<form method="post" action="/login" class="panel">
  <input type="hidden" name="csrf" value="${data.formToken}">
  <input type="hidden" name="next" value="${data.next}">
  <label for="login-name">Name</label>
  <input id="login-name" name="name" type="text" autocomplete="username" autocapitalize="none" spellcheck="false" required value="${data.name ?? ''}">
  <label for="login-password">Password</label>
  <input id="login-password" name="password" type="password" autocomplete="current-password" required>
  <button type="submit" class="button button-main">Sign in</button>
</form>`;
  return renderPage({ title: 'Sign in', siteName: data.siteName, principal: null, body });
}

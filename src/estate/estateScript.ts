/**
 * /static/estate.js: keeps an estate page current. Every few seconds it fetches the fragment named by
 * the element's data-refresh and swaps it in; it waits while someone is typing in a form inside it
 * and while the tab is hidden, and refreshes at once when the tab comes back into view. Served as a file because the CSP allows no inline script; without
 * JavaScript the page reloads itself through a <noscript> refresh instead.
 */
export const ESTATE_SCRIPT = `'use strict';
(function () {
  var box = document.querySelector('[data-refresh]');
  if (!box) return;
  var url = box.getAttribute('data-refresh');
  var every = Math.max(2, Number(box.getAttribute('data-refresh-seconds')) || 10) * 1000;
  function typing() {
    var el = document.activeElement;
    return !!el && box.contains(el) && (el.tagName === 'INPUT' || el.tagName === 'TEXTAREA' || el.tagName === 'BUTTON');
  }
  function refresh() {
    if (document.hidden || typing()) return;
    fetch(url, { credentials: 'same-origin', headers: { Accept: 'text/html' }, cache: 'no-store' })
      .then(function (res) {
        if (res.status === 401) { window.location.assign('/login'); return null; }
        if (!res.ok) throw new Error('HTTP ' + res.status);
        return res.text();
      })
      .then(function (text) { if (text !== null && !typing()) box.innerHTML = text; })
      .catch(function () { /* the next round tries again; the page still shows the last picture */ });
  }
  setInterval(refresh, every);
  // A phone brought back to the tab shows the current picture at once, not up to one interval later.
  document.addEventListener('visibilitychange', function () { if (!document.hidden) refresh(); });
  window.addEventListener('focus', refresh);
})();
`;

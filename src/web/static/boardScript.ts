/**
 * /static/board.js: keeps the board current without a reload. On every server-sent event it fetches
 * the board's list fragment and swaps it in; a slow timer keeps the "ago" figures fresh between
 * events. Served as a file because the CSP allows no inline script. Without JavaScript the board
 * reloads itself through a <noscript> refresh instead.
 */
export const BOARD_SCRIPT = `'use strict';
(function () {
  var list = document.getElementById('board-list');
  var status = document.getElementById('live-status');
  if (!list) return;
  var busy = false;
  var again = false;

  function say(text) {
    if (!status) return;
    status.textContent = text;
    status.hidden = text === '';
  }

  function refresh() {
    if (busy) { again = true; return; }
    busy = true;
    fetch('/board/list', { credentials: 'same-origin', headers: { Accept: 'text/html' }, cache: 'no-store' })
      .then(function (res) {
        if (res.status === 401) { window.location.assign('/login?next=%2F'); return null; }
        if (!res.ok) throw new Error('HTTP ' + res.status);
        return res.text();
      })
      .then(function (text) { if (text !== null) list.innerHTML = text; })
      .catch(function () { say('Cannot reach the monitor; showing the last known state.'); })
      .then(function () {
        busy = false;
        if (again) { again = false; refresh(); }
      });
  }

  if ('EventSource' in window) {
    var source = new EventSource('/events/stream');
    source.addEventListener('open', function () { say(''); refresh(); });
    source.addEventListener('loops', refresh);
    source.addEventListener('alarms', refresh);
    source.addEventListener('error', function () { say('Live updates paused; reconnecting…'); });
  }
  setInterval(refresh, 15000);
  document.addEventListener('visibilitychange', function () { if (!document.hidden) refresh(); });
})();
`;

/**
 * /static/site.css. Phone first: one column, large type, every control at least 48 px tall, high
 * contrast for reading outdoors. States are told apart by words and shapes first; colour only adds.
 */
export const SITE_STYLES = `:root {
  --ink: #111;
  --paper: #fff;
  --muted: #3d3d3d;
  --line: #767676;
  --panel: #f3f3f1;
  --alarm: #b3261e;
  --alarm-bg: #fdecea;
  --trouble: #7a4300;
  --trouble-bg: #fff3de;
  --healthy: #1d6b2c;
  --quiet: #4a4a4a;
  --focus: #1f4e9c;
  --trace: #1f4e9c;
  color-scheme: light dark;
}
@media (prefers-color-scheme: dark) {
  :root {
    --ink: #f2f2f2; --paper: #111; --muted: #cfcfcf; --line: #8f8f8f; --panel: #1e1e1e;
    --alarm: #ff8a80; --alarm-bg: #3a1411; --trouble: #ffc46b; --trouble-bg: #33240c;
    --healthy: #7fd68f; --quiet: #c4c4c4; --focus: #8ab4ff; --trace: #8ab4ff;
  }
}
*, *::before, *::after { box-sizing: border-box; }
html { -webkit-text-size-adjust: 100%; text-size-adjust: 100%; }
body {
  margin: 0; background: var(--paper); color: var(--ink);
  font: 18px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, "Noto Sans", sans-serif;
}
a { color: inherit; }
:focus-visible { outline: 3px solid var(--focus); outline-offset: 2px; }
.visually-hidden { position: absolute; width: 1px; height: 1px; overflow: hidden; clip: rect(0 0 0 0); white-space: nowrap; }
.top {
  display: flex; flex-wrap: wrap; align-items: center; justify-content: space-between; gap: 4px 12px;
  padding: 4px 12px; border-bottom: 2px solid var(--ink);
}
.site-name { font-weight: 700; font-size: 1.15rem; text-decoration: none; min-height: 48px; display: flex; align-items: center; }
.nav { display: flex; gap: 4px; }
.nav-link { min-height: 48px; min-width: 48px; padding: 0 12px; display: flex; align-items: center; text-decoration: none; font-weight: 600; border-radius: 6px; }
.nav-link[aria-current="page"] { text-decoration: underline; text-decoration-thickness: 3px; text-underline-offset: 6px; }
main { max-width: 720px; margin: 0 auto; padding: 8px 12px 24px; }
h1 { font-size: 1.5rem; line-height: 1.2; margin: 12px 0; }
h2 { font-size: 1.15rem; margin: 20px 0 8px; }
.summary { margin: 8px 0 4px; font-weight: 600; }
.count + .count::before { content: " · "; font-weight: 400; }
.as-of { font-weight: 400; color: var(--muted); }
.live-status { margin: 4px 0; padding: 8px 12px; border: 2px dashed var(--line); border-radius: 6px; }
.group h2 { font-size: 1rem; text-transform: uppercase; letter-spacing: 0.04em; margin: 18px 0 6px; color: var(--muted); }
.cards { list-style: none; margin: 0; padding: 0; display: grid; gap: 8px; }
.card { border: 2px solid var(--line); border-radius: 10px; background: var(--paper); }
.card-link { display: flex; gap: 12px; align-items: flex-start; padding: 12px; min-height: 72px; text-decoration: none; }
.card-text { display: flex; flex-direction: column; min-width: 0; }
.card-name { font-size: 1.25rem; font-weight: 700; overflow-wrap: anywhere; }
.card-state { font-weight: 700; }
.card-alarm { font-weight: 600; }
.card-meta { color: var(--muted); font-size: 0.95rem; }
.shape { flex: none; }
.state-tripped { color: var(--alarm); }
.state-open, .state-shorted, .state-offline { color: var(--trouble); }
.state-unknown, .state-out-of-service { color: var(--quiet); }
.state-healthy { color: var(--healthy); }
.card .card-text { color: var(--ink); }
.card.state-tripped { border-color: var(--alarm); border-width: 3px; background: var(--alarm-bg); }
.card.state-open, .card.state-shorted, .card.state-offline { border-color: var(--trouble); border-width: 3px; background: var(--trouble-bg); }
.card.state-tripped .card-state { color: var(--alarm); }
/* Back to normal but not acknowledged: neither the healthy look nor the active one. A thick dashed
   border in the priority's colour, plain background, hollow shape; it stays until someone acknowledges. */
.state-back-to-normal { color: var(--alarm); }
.state-back-to-normal.attention-trouble, .state-back-to-normal.attention-system { color: var(--trouble); }
.card.state-back-to-normal { border: 4px dashed var(--alarm); background: var(--paper); }
.card.state-back-to-normal.attention-trouble, .card.state-back-to-normal.attention-system { border-color: var(--trouble); }
.card.state-back-to-normal .card-state { color: var(--alarm); }
.card.state-back-to-normal.attention-trouble .card-state, .card.state-back-to-normal.attention-system .card-state { color: var(--trouble); }
.card.state-open .card-state, .card.state-shorted .card-state, .card.state-offline .card-state { color: var(--trouble); }
.status { display: flex; gap: 14px; align-items: center; padding: 12px; border: 3px solid currentColor; border-radius: 10px; margin: 12px 0; }
.status.state-tripped { background: var(--alarm-bg); }
.status.state-open, .status.state-shorted, .status.state-offline { background: var(--trouble-bg); }
.status.state-back-to-normal { border: 4px dashed currentColor; background: var(--paper); }
.status.state-closed { color: var(--quiet); border-width: 2px; background: var(--panel); }
.status > div { color: var(--ink); }
.status-title { font-size: 1.4rem; font-weight: 700; margin: 0; overflow-wrap: anywhere; }
.status-priority { margin: 0; text-transform: uppercase; font-weight: 700; letter-spacing: 0.05em; }
.status-state { margin: 0; font-weight: 600; }
.facts { display: grid; grid-template-columns: max-content 1fr; gap: 6px 14px; margin: 12px 0; }
.facts dt { font-weight: 700; }
.facts dd { margin: 0; overflow-wrap: anywhere; }
.panel { background: var(--panel); border-radius: 10px; padding: 12px; margin: 14px 0; }
.panel h2 { margin-top: 0; }
.check p { margin: 0; font-size: 1.05rem; }
label { display: block; font-weight: 600; margin: 10px 0 4px; }
input[type="text"], input[type="password"], input[type="datetime-local"], select, textarea {
  display: block; width: 100%; min-height: 48px; padding: 10px; font: inherit; color: var(--ink);
  background: var(--paper); border: 2px solid var(--line); border-radius: 6px;
}
textarea { resize: vertical; }
.button {
  display: inline-flex; align-items: center; justify-content: center; min-height: 48px; min-width: 48px;
  padding: 10px 18px; margin-top: 12px; font: inherit; font-weight: 700; text-decoration: none; cursor: pointer;
  color: var(--ink); background: var(--paper); border: 2px solid var(--ink); border-radius: 8px;
}
.button-main { background: var(--ink); color: var(--paper); width: 100%; }
.button-quiet { border-color: var(--line); }
.flash { padding: 12px; border: 2px solid var(--healthy); border-radius: 8px; font-weight: 600; }
.problem { padding: 12px; border: 2px solid var(--alarm); border-radius: 8px; font-weight: 600; }
.note { color: var(--muted); }
.plain-list, .trail, .events { padding-left: 0; list-style: none; margin: 0; }
.trail li, .plain-list li { padding: 6px 0; border-bottom: 1px solid var(--line); overflow-wrap: anywhere; }
.event { display: flex; flex-direction: column; padding: 8px 0; border-bottom: 1px solid var(--line); }
.event time { font-weight: 700; }
.event-where { color: var(--muted); }
.event-what { overflow-wrap: anywhere; }
.event-alarm .event-where { color: var(--alarm); font-weight: 600; }
.filters details { margin-top: 8px; }
/* "Exact times" opens more fields: it is drawn as a button (border, marker, focus ring), not as plain text. */
.filters summary {
  min-height: 48px; display: inline-flex; align-items: center; gap: 8px; padding: 8px 16px; cursor: pointer; font-weight: 700;
  border: 2px solid var(--ink); border-radius: 8px; background: var(--paper); list-style: none;
}
.filters summary::-webkit-details-marker { display: none; }
.filters summary::before { content: "▸"; }
.filters details[open] > summary::before { content: "▾"; }
.filters summary:focus-visible { outline: 3px solid var(--focus); outline-offset: 2px; }
.timeline { margin: 8px 0; }
.timeline-svg { width: 100%; height: auto; display: block; color: var(--ink); }
.tl-label { font-size: 13px; fill: currentColor; }
/* CSS outranks the SVG's presentation attributes, so the trace follows the colour scheme. */
.tl-trace { stroke: var(--trace); }
.tl-band, .tl-dot { fill: var(--trace); }
.timeline figcaption { font-size: 0.95rem; }
.timeline figcaption p { margin: 6px 0; }
.foot { max-width: 720px; margin: 0 auto; padding: 12px; border-top: 1px solid var(--line); }
.signout { display: flex; flex-wrap: wrap; align-items: center; gap: 8px; }
.signout .button { margin-top: 0; }
.who { color: var(--muted); }
.caution { color: var(--muted); font-size: 0.85rem; }
`;

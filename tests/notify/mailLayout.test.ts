import { describe, expect, it } from 'vitest';
import { escapeHtml, mailPageHtml } from '../../src/notify/mailLayout.js';

/**
 * The HTML part's frame and escaping, held to the HTML Living Standard (WHATWG): §13.1.1 the DOCTYPE
 * (`<!DOCTYPE html>`, case-insensitive), §4.2.5 the `<meta charset="utf-8">` declaration, §4.2.2
 * `<title>`; and §13.1.4 character references — `&amp;` `&lt;` `&gt;` `&quot;` are named references,
 * `&#39;` the decimal reference for U+0027 APOSTROPHE. Text inside an element or a quoted attribute
 * with those five replaced cannot open a tag or close the attribute.
 */
describe('escapeHtml', () => {
  it('replaces each of & < > " \' with its character reference, and nothing else', () => {
    expect(escapeHtml(`&<>"'`)).toBe('&amp;&lt;&gt;&quot;&#39;');
    expect(escapeHtml(`Tom's <b>"barn"</b> & yard`)).toBe('Tom&#39;s &lt;b&gt;&quot;barn&quot;&lt;/b&gt; &amp; yard');
    expect(escapeHtml('Well pit — 2 °C, “heater off”')).toBe('Well pit — 2 °C, “heater off”');
    expect(escapeHtml('')).toBe('');
  });

  it('every occurrence, not only the first', () => {
    expect(escapeHtml('<<>>&&')).toBe('&lt;&lt;&gt;&gt;&amp;&amp;');
  });
});

describe('mailPageHtml', () => {
  const page = mailPageHtml('[ALARM] Ridge & <Co>: Well pit — tripped', '<p>body</p>');

  it('is a whole UTF-8 HTML document whose title is the escaped subject', () => {
    expect(page.toLowerCase().startsWith('<!doctype html>\n')).toBe(true);
    expect(page).toContain('<meta charset="utf-8">');
    expect(page).toContain('<title>[ALARM] Ridge &amp; &lt;Co&gt;: Well pit — tripped</title>');
    expect(page).toContain('<html lang="en">');
  });

  it('puts the body markup, as given, inside <body>, and closes the document', () => {
    expect(page).toMatch(/<body[^>]*>\n<p>body<\/p>\n<\/body><\/html>\n$/);
    // Scaled for phones: the viewport meta of the W3C CSS Viewport Module Level 1 (width=device-width).
    expect(page).toContain('<meta name="viewport" content="width=device-width, initial-scale=1">');
  });
});

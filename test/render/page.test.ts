import { describe, expect, it } from 'vitest';
import { escapeHtml } from '../../src/render/html.js';
import { renderPage } from '../../src/render/page.js';
import { CAUTIONS } from '../../src/schema/cautions.js';

// Behaviour in a real browser is tested in test/browser/page.test.ts; these are static checks.
describe('renderPage', () => {
  const page = renderPage();

  it('has the stable element ids scripts and tests rely on', () => {
    for (const id of ['proposal', 'proposal-file', 'load-demo', 'run-optimize', 'run-stress', 'status', 'token', 'token-input', 'errors', 'result', 'cautions']) {
      expect(page).toContain(`id="${id}"`);
    }
  });

  it('labels the textarea and announces status and errors to assistive technology', () => {
    expect(page).toContain('<label for="proposal">');
    expect(page).toMatch(/<span id="status" role="status" aria-live="polite">/);
    expect(page).toMatch(/<section id="errors" role="alert"/);
    expect(page).toContain('<html lang="en">');
    for (const id of ['load-demo', 'run-optimize', 'run-stress']) expect(page).toMatch(new RegExp(`<button type="button" id="${id}"`));
  });

  it('shows every caution near the top, before the form', () => {
    for (const c of CAUTIONS) expect(page).toContain(`<li>${escapeHtml(c)}</li>`);
    expect(page.indexOf('id="cautions"')).toBeLessThan(page.indexOf('id="proposal"'));
  });

  it('loads nothing from elsewhere: no external scripts, styles, fonts or images', () => {
    expect(page).not.toMatch(/<script[^>]+src=/i);
    expect(page).not.toMatch(/<link\b/i);
    expect(page).not.toMatch(/https?:\/\//i);
    const css = /<style>([\s\S]*?)<\/style>/.exec(page)![1];
    expect(css).not.toMatch(/@import|url\(/i);
  });

  it('calls the contract routes', () => {
    expect(page).toContain("fetch('/v1/examples/demo'");
    expect(page).toContain("post('/v1/optimize'");
    expect(page).toContain("post('/v1/stress'");
    expect(page).toContain("post('/v1/check'");
    expect(page).toContain("post('/v1/render?'");
  });

  it('has one inline script that is syntactically valid JavaScript and never uses innerHTML', () => {
    const scripts = [...page.matchAll(/<script>([\s\S]*?)<\/script>/g)].map((m) => m[1]);
    expect(scripts).toHaveLength(1);
    // Compiling (not running) the body checks its syntax.
    expect(() => new Function(scripts[0])).not.toThrow();
    expect(scripts[0]).not.toContain('innerHTML');
    expect(scripts[0]).not.toContain('insertAdjacentHTML');
    // The report is parsed by DOMParser (which runs nothing) and stripped of active content before it is inserted.
    expect(scripts[0]).toContain('new DOMParser().parseFromString(');
    // The token is kept for the tab only.
    expect(scripts[0]).toContain('sessionStorage');
    expect(scripts[0]).not.toContain('localStorage');
  });
});

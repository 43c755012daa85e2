import { SELF } from 'cloudflare:test';
import { describe, expect, it } from 'vitest';

// The page's hash-based CSP is computed with WebCrypto at the first request: check that it works in workerd too.
describe('the reviewer page in the Workers runtime', () => {
  it('serves / with a hash-based Content-Security-Policy, frame-ancestors none and nosniff', async () => {
    const res = await SELF.fetch('http://wobble.test/');
    expect(res.status).toBe(200);
    const csp = res.headers.get('content-security-policy') ?? '';
    expect(csp).toMatch(/script-src 'sha256-[A-Za-z0-9+/]{43}='/);
    expect(csp).toMatch(/style-src 'sha256-[A-Za-z0-9+/]{43}='/);
    expect(csp).toContain("frame-ancestors 'none'");
    expect(res.headers.get('x-content-type-options')).toBe('nosniff');
    expect(await res.text()).toContain('id="proposal-file"');
  });
});

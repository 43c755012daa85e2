import { describe, expect, it } from 'vitest';
import { authorise, bearerToken, challenge } from '../../src/http/auth.js';
import { readConfig } from '../../src/http/config.js';
import { allowedOrigin } from '../../src/http/cors.js';

describe('readConfig', () => {
  it('defaults: no token, any origin, built-in limits, no rate limiter, nothing wrong', () => {
    expect(readConfig(undefined)).toEqual({ tokens: [], cors: { any: true }, rateLimiter: undefined, problems: [] });
  });

  it('reads several tokens and trims them; a set-but-empty secret or a token with spaces is a problem', () => {
    expect(readConfig({ WOBBLE_API_TOKEN: ' a1 , b2,, ' }).tokens).toEqual(['a1', 'b2']);
    expect(readConfig({ WOBBLE_API_TOKEN: ' , ' }).problems).toEqual(['WOBBLE_API_TOKEN is set but holds no token']);
    expect(readConfig({ WOBBLE_API_TOKEN: 'two words' }).problems[0]).toMatch(/white space/);
  });

  it('CORS: `*` without a token, nobody else with a token unless listed, exact origins otherwise', () => {
    expect(readConfig({ WOBBLE_API_TOKEN: 'tok' }).cors).toEqual({ any: false, origins: new Set() });
    expect(readConfig({ WOBBLE_API_TOKEN: 'tok', WOBBLE_CORS_ORIGINS: '*' }).cors).toEqual({ any: true });
    const listed = readConfig({ WOBBLE_CORS_ORIGINS: 'https://A.example.org/, http://localhost:5173' });
    expect(allowedOrigin('https://a.example.org', listed.cors)).toBe('https://a.example.org');
    expect(allowedOrigin('http://localhost:5173', listed.cors)).toBe('http://localhost:5173');
    expect(allowedOrigin('https://a.example.org.evil.test', listed.cors)).toBeUndefined();
    expect(allowedOrigin('null', listed.cors)).toBeUndefined();
    expect(readConfig({ WOBBLE_CORS_ORIGINS: 'reviews.example.org' }).problems[0]).toMatch(/expected origins like/);
  });

  it('WOBBLE_MAX_WORK: a positive number, else a problem', () => {
    expect(readConfig({ WOBBLE_MAX_WORK: '2e8' }).maxWork).toBe(2e8);
    expect(readConfig({ WOBBLE_MAX_WORK: ' ' }).maxWork).toBeUndefined();
    for (const bad of ['0', '-1', 'NaN', 'Infinity', '1e400', 'ten']) expect(readConfig({ WOBBLE_MAX_WORK: bad }).problems, bad).toHaveLength(1);
  });
});

describe('bearer tokens', () => {
  it('parses RFC 6750 §2.1 credentials (case-insensitive scheme, token68 characters)', () => {
    expect(bearerToken('Bearer abc.DEF-123_~+/==')).toEqual({ token: 'abc.DEF-123_~+/==' });
    expect(bearerToken('bearer x')).toEqual({ token: 'x' });
    expect(bearerToken(null)).toEqual({ missing: true });
    expect(bearerToken('Bearer')).toEqual({ malformed: true });
    expect(bearerToken('Bearer a b')).toEqual({ malformed: true });
    expect(bearerToken('Token abc')).toEqual({ malformed: true });
  });

  it('accepts any configured token, with a stable non-secret key per token', async () => {
    const tokens = ['alpha-token', 'beta-token'];
    const a = await authorise('Bearer alpha-token', tokens);
    const a2 = await authorise('Bearer alpha-token', tokens);
    const b = await authorise('Bearer beta-token', tokens);
    expect(a.ok && b.ok && a2.ok).toBe(true);
    if (a.ok && a2.ok && b.ok) {
      expect(a.key).toBe(a2.key);
      expect(a.key).not.toBe(b.key);
      expect(a.key).toMatch(/^token:[0-9a-f]{16}$/);
    }
    expect(await authorise('Bearer alpha-toke', tokens)).toMatchObject({ ok: false, error: 'invalid_token' });
    expect(await authorise('Bearer alpha-tokenn', tokens)).toMatchObject({ ok: false, error: 'invalid_token' });
    expect(await authorise(null, tokens)).toMatchObject({ ok: false, error: 'missing' });
    expect(await authorise('Basic eDp5', tokens)).toMatchObject({ ok: false, error: 'invalid_request' });
    expect(await authorise(null, [])).toEqual({ ok: true });
  });

  it('challenges as RFC 6750 §3 describes', () => {
    expect(challenge('missing')).toBe('Bearer realm="wobble"');
    expect(challenge('invalid_token')).toBe('Bearer realm="wobble", error="invalid_token"');
  });
});

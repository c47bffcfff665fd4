import { describe, expect, it } from 'vitest';
import { crossSiteRefused, type OriginFacts } from './origin.ts';

const OWN = 'http://127.0.0.1:4321';
const base: OriginFacts = { method: 'POST', origin: OWN, ownOrigin: OWN, bearer: false, sessionCookie: true, api: false };

describe('crossSiteRefused', () => {
  it('lets safe methods through from anywhere', () => {
    for (const method of ['GET', 'HEAD', 'OPTIONS']) expect(crossSiteRefused({ ...base, method, origin: 'http://evil.example' })).toBe(false);
  });

  it('lets same-origin unsafe requests through', () => {
    for (const method of ['POST', 'PUT', 'PATCH', 'DELETE']) expect(crossSiteRefused({ ...base, method })).toBe(false);
  });

  it('refuses a cookie request from another origin, with no Origin, with Origin null, or another scheme or port', () => {
    for (const origin of ['http://evil.example', null, 'null', 'https://127.0.0.1:4321', 'http://127.0.0.1:4322']) {
      expect(crossSiteRefused({ ...base, origin }), String(origin)).toBe(true);
      expect(crossSiteRefused({ ...base, origin, api: true }), String(origin)).toBe(true);
    }
  });

  it('refuses page posts without any cookie (a form elsewhere signing someone in)', () => {
    expect(crossSiteRefused({ ...base, sessionCookie: false, origin: 'http://evil.example' })).toBe(true);
  });

  it('exempts Bearer requests, pages and API alike, and API requests without the cookie', () => {
    expect(crossSiteRefused({ ...base, origin: null, bearer: true })).toBe(false);
    expect(crossSiteRefused({ ...base, origin: 'http://evil.example', bearer: true, api: true })).toBe(false);
    expect(crossSiteRefused({ ...base, origin: null, sessionCookie: false, api: true })).toBe(false);
  });
});

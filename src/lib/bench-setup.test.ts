// A bench set up today: the page says what is missing until its gateway has been heard from once.
import { describe, expect, it } from 'vitest';
import { benchSetup } from './bench-setup.ts';

describe('benchSetup', () => {
  it('says a bench has no gateway', () => {
    expect(benchSetup([], false)).toEqual({ kind: 'no-gateway' });
  });

  it('names the gateways that have never connected', () => {
    expect(benchSetup([{ id: 'gw-a', online: false, lastSeenMs: null }, { id: 'gw-b', online: false, lastSeenMs: null }], false)).toEqual({ kind: 'not-connected', gateways: ['gw-a', 'gw-b'] });
  });

  it('has nothing to say once a gateway is online, was heard from before, or came online while the page was open', () => {
    expect(benchSetup([{ id: 'gw-a', online: true, lastSeenMs: null }], false)).toBeNull();
    expect(benchSetup([{ id: 'gw-a', online: false, lastSeenMs: 1_700_000_000_000 }], false)).toBeNull();
    expect(benchSetup([{ id: 'gw-a', online: false, lastSeenMs: null }], true)).toBeNull();
  });
});

// The overview card's gateway badge: a bench being set up reads differently from one whose gateway went away.
import { describe, expect, it } from 'vitest';
import { gatewayBadge } from './overview.ts';

describe('gatewayBadge', () => {
  it('says a bench has no gateway yet, without counting or alarming', () => {
    expect(gatewayBadge({ gatewaysOnline: 0, gatewaysTotal: 0, gatewaysEverSeen: 0 })).toEqual({ text: 'no gateway yet', tone: 'quiet', count: null });
  });

  it('says a gateway that has never connected is not connected yet', () => {
    expect(gatewayBadge({ gatewaysOnline: 0, gatewaysTotal: 1, gatewaysEverSeen: 0 })).toEqual({ text: 'not connected yet', tone: 'quiet', count: null });
  });

  it('counts online gateways, and calls a bench offline once a gateway it had has gone', () => {
    expect(gatewayBadge({ gatewaysOnline: 1, gatewaysTotal: 2, gatewaysEverSeen: 1 })).toEqual({ text: 'online', tone: 'good', count: '1/2' });
    expect(gatewayBadge({ gatewaysOnline: 0, gatewaysTotal: 2, gatewaysEverSeen: 1 })).toEqual({ text: 'offline', tone: 'bad', count: '0/2' });
  });

  it('calls a bench silent when its gateway claims online but has sent nothing, before calling it offline', () => {
    expect(gatewayBadge({ gatewaysOnline: 0, gatewaysTotal: 2, gatewaysEverSeen: 2, gatewaysSilent: 1 })).toEqual({ text: 'silent', tone: 'warn', count: '0/2' });
    expect(gatewayBadge({ gatewaysOnline: 1, gatewaysTotal: 2, gatewaysEverSeen: 2, gatewaysSilent: 1 })).toEqual({ text: 'online', tone: 'good', count: '1/2' });
  });
});

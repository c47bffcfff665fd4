import { describe, expect, it } from 'vitest';
import { withGatewayState } from './gateway-presence.ts';

describe('withGatewayState', () => {
  const list = [
    { id: 'gw-1', online: true },
    { id: 'gw-2', online: true },
  ];

  it('sets one gateway and keeps the others and their order', () => {
    expect(withGatewayState(list, { id: 'gw-1', online: false })).toEqual([
      { id: 'gw-1', online: false },
      { id: 'gw-2', online: true },
    ]);
  });

  it('hands back the same list when nothing changes, so the page does not render again', () => {
    expect(withGatewayState(list, { id: 'gw-2', online: true })).toBe(list);
  });

  it('marks a gateway silent since a time, and hands back the same list when that does not change', () => {
    const silent = withGatewayState(list, { id: 'gw-2', online: false, silentSince: 1_000 });
    expect(silent).toEqual([list[0], { id: 'gw-2', online: false, silentSince: 1_000 }]);
    expect(withGatewayState(silent, { id: 'gw-2', online: false, silentSince: 1_000 })).toBe(silent);
    // Its last will after the silence: offline, and no longer silent.
    expect(withGatewayState(silent, { id: 'gw-2', online: false })).toEqual([list[0], { id: 'gw-2', online: false }]);
  });

  it('adds a gateway assigned to the bench after the page was rendered', () => {
    expect(withGatewayState(list, { id: 'gw-3', online: true })).toEqual([...list, { id: 'gw-3', online: true }]);
  });
});

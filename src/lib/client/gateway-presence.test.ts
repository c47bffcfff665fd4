import { describe, expect, it } from 'vitest';
import { withGatewayState } from './gateway-presence.ts';

describe('withGatewayState', () => {
  const list = [
    { id: 'gw-1', online: true },
    { id: 'gw-2', online: true },
  ];

  it('sets one gateway and keeps the others and their order', () => {
    expect(withGatewayState(list, 'gw-1', false)).toEqual([
      { id: 'gw-1', online: false },
      { id: 'gw-2', online: true },
    ]);
  });

  it('hands back the same list when nothing changes, so the page does not render again', () => {
    expect(withGatewayState(list, 'gw-2', true)).toBe(list);
  });

  it('adds a gateway assigned to the bench after the page was rendered', () => {
    expect(withGatewayState(list, 'gw-3', true)).toEqual([...list, { id: 'gw-3', online: true }]);
  });
});

import { describe, expect, it } from 'vitest';
import { safeNextPath } from './next-path.ts';

describe('safeNextPath', () => {
  it('keeps a path on this site with its query', () => {
    expect(safeNextPath('/benches/mz-633?tab=history&x=%2F%2F')).toBe('/benches/mz-633?tab=history&x=%2F%2F');
    expect(safeNextPath('/')).toBe('/');
  });

  it.each([
    null,
    '',
    'https://evil.example/',
    'evil.example',
    '//evil.example',
    '/\\evil.example',
    '\\\\evil.example',
    '/\t/evil.example',
    '/\n/evil.example',
    '/\u0000',
    '/a b',
    '/benches//x',
    '/\u20ac',
    'javascript:alert(1)',
  ])('sends %j home instead', (next) => {
    expect(safeNextPath(next)).toBe('/');
  });
});

import { describe, expect, it } from 'vitest';
import { FIGURES_STALE_MS, figuresStaleness } from './figures-age.ts';

describe('figuresStaleness', () => {
  const at = 1_700_000_000_000;

  it('keeps figures current within the age limit while a gateway is online', () => {
    expect(figuresStaleness(at, at + 1500, 1, 1)).toBeNull();
    expect(figuresStaleness(at, at + FIGURES_STALE_MS, 1, 1)).toBeNull();
  });

  it('calls figures stale past the age limit, saying how old they are', () => {
    expect(figuresStaleness(at, at + FIGURES_STALE_MS + 1, 1, 1)).toEqual({ ageMs: FIGURES_STALE_MS + 1, offline: false });
  });

  it('calls young figures stale at once when every gateway is offline', () => {
    expect(figuresStaleness(at, at + 800, 0, 1)).toEqual({ ageMs: 800, offline: true });
    expect(figuresStaleness(at, at + 800, 1, 2)).toBeNull();
  });

  it('reads a reader clock slightly behind the gateway as age 0', () => {
    expect(figuresStaleness(at, at - 300, 1, 1)).toBeNull();
    expect(figuresStaleness(at, at - 300, 0, 1)).toEqual({ ageMs: 0, offline: true });
  });

  it('does not call a bench without gateways offline (imported recordings only)', () => {
    expect(figuresStaleness(at, at + 500, 0, 0)).toBeNull();
  });
});

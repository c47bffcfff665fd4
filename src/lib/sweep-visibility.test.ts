import { describe, expect, it } from 'vitest';
import { shownVisibility, visibilityBasis } from './sweep-visibility.ts';

describe('shownVisibility', () => {
  // The figures of a pass at 200 signal and 50 dark counts per bin (fringe-fit.test.ts); the rule only picks.
  it('takes the net value with its own error when the sweep has both', () => {
    expect(shownVisibility({ visibility: 0.72, visibilityErr: 0.0034, visibilityNet: 0.9, visibilityNetErr: 0.0043 })).toEqual({ value: 0.9, err: 0.0043, net: true });
  });

  it('falls back to raw, error and label together, when there is no net error', () => {
    expect(shownVisibility({ visibility: 0.72, visibilityErr: 0.0034, visibilityNet: 0.9, visibilityNetErr: null })).toEqual({ value: 0.72, err: 0.0034, net: false });
    expect(shownVisibility({ visibility: 0.72, visibilityErr: 0.0034, visibilityNet: null })).toEqual({ value: 0.72, err: 0.0034, net: false });
    expect(shownVisibility({ visibility: 0.72, visibilityErr: 0.0034 })).toEqual({ value: 0.72, err: 0.0034, net: false });
  });
});

describe('visibilityBasis', () => {
  const net = { visibility: 0.72, visibilityErr: 0.0034, visibilityNet: 0.9, visibilityNetErr: 0.0043 };
  const raw = { visibility: 0.72, visibilityErr: 0.0034, visibilityNet: null, visibilityNetErr: null };
  it('says whether the shown values are net, raw or a mix', () => {
    expect(visibilityBasis([])).toBeNull();
    expect(visibilityBasis([net, net])).toBe('net of darks');
    expect(visibilityBasis([raw])).toBe('raw (no dark subtraction)');
    expect(visibilityBasis([raw, net, net])).toBe('net of darks for 2 of 3 passes, raw for the rest');
  });
});

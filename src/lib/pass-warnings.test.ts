import { describe, expect, it } from 'vitest';
import { FIT_WARNING } from './analysis/fit-warnings.ts';
import { fitFringes } from './analysis/fringe-fit.ts';
import { passWarnings, shortWarning, warningsLine } from './pass-warnings.ts';

describe('pass warnings', () => {
  it('reads the warnings of a stored fit, flagging a pass without a significant fringe', () => {
    expect(passWarnings({ visibility: 0.01, warnings: [FIT_WARNING.noFringe] })).toEqual({ all: [FIT_WARNING.noFringe], noFringe: true });
    expect(passWarnings({ visibility: 1, warnings: [FIT_WARNING.atBound] })).toEqual({ all: [FIT_WARNING.atBound], noFringe: false });
    expect(passWarnings({ visibility: 0.9, warnings: [] })).toEqual({ all: [], noFringe: false });
  });

  it('has none for fits without a readable list', () => {
    for (const fit of [undefined, null, 'x', {}, { warnings: 'no significant fringe' }, { warnings: [3] }]) expect(passWarnings(fit)).toEqual({ all: [], noFringe: false });
  });

  it('shortens known warnings and cuts others at the colon', () => {
    expect(shortWarning(FIT_WARNING.notConverged)).toBe('fit not converged');
    expect(shortWarning('drive reversed early: pass shortened')).toBe('drive reversed early');
    expect(warningsLine(passWarnings({ warnings: [FIT_WARNING.noFringe, FIT_WARNING.notConverged] }))).toBe('no significant fringe · fit not converged');
  });

  it('recognises the fitter’s own no-fringe warning on flat counts', () => {
    // Flat outputs over a pass: the fitter's warning, as stored, must read as "no fringe".
    const n = 200;
    const x = Float64Array.from({ length: n }, (_, i) => i * 0.05);
    const flat = Float64Array.from({ length: n }, (_, i) => 100 + ((i * 7) % 11) - 5);
    const fit = fitFringes({ x, countsA: flat, countsB: flat.slice().reverse() });
    expect(fit.ok).toBe(true);
    if (fit.ok) expect(passWarnings({ warnings: fit.warnings }).noFringe).toBe(true);
  });
});

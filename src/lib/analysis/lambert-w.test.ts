import fc from 'fast-check';
import { lambertW0 as referenceW0 } from 'lambert-w-function';
import { describe, expect, it } from 'vitest';
import { BRANCH_POINT, lambertW0 } from './lambert-w.ts';

describe('Lambert W₀', () => {
  it('agrees with the lambert-w-function package (independent reference, npm) over the domain', () => {
    fc.assert(
      fc.property(fc.double({ min: BRANCH_POINT + 1e-9, max: 1e6, noNaN: true }), (x) => {
        const w = lambertW0(x);
        expect(Math.abs(w - referenceW0(x))).toBeLessThanOrEqual(1e-9 * (1 + Math.abs(w)));
      }),
    );
  });

  it('satisfies w·e^w = x to rounding (definition), including near the branch point', () => {
    for (const x of [BRANCH_POINT + 1e-12, -0.3, -0.05, -1e-8, 1e-8, 1, Math.E, 100]) {
      const w = lambertW0(x);
      expect(w * Math.exp(w)).toBeCloseTo(x, 10);
    }
    expect(lambertW0(BRANCH_POINT)).toBeCloseTo(-1, 6);
    expect(lambertW0(Math.E)).toBeCloseTo(1, 14); // W(e) = 1
  });

  it('is undefined below −1/e', () => {
    expect(lambertW0(-0.4)).toBeNaN();
  });
});

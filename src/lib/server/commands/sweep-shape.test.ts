import { describe, expect, it } from 'vitest';
import { MAX_STEPS_PER_PASS, stepsPerPass, sweepShapeViolation } from './sweep-shape.ts';

const sweep = { op: 'sweep' as const, from: 0, to: 40, step: 0.05, dwell: 20, sweeps: 4 };

describe('sweepShapeViolation', () => {
  it('accepts the contract’s example, a downward sweep, and other commands', () => {
    expect(sweepShapeViolation(sweep)).toBeNull();
    expect(sweepShapeViolation({ ...sweep, from: 40, to: 0 })).toBeNull();
    expect(sweepShapeViolation({ op: 'stop' })).toBeNull();
    expect(sweepShapeViolation({ op: 'hold', x: 3 })).toBeNull();
  });

  it('refuses a sweep without a span', () => {
    expect(sweepShapeViolation({ ...sweep, from: 12, to: 12 })).toMatch(/needs a span/);
  });

  it('refuses a step too small for the span, and takes one just fine enough', () => {
    expect(sweepShapeViolation({ ...sweep, step: 1e-7, sweeps: 1 })).toMatch(/400000000 steps .* at most 65536 per pass/);
    expect(stepsPerPass(0, 40, 40 / MAX_STEPS_PER_PASS)).toBe(MAX_STEPS_PER_PASS);
    expect(sweepShapeViolation({ ...sweep, step: 40 / MAX_STEPS_PER_PASS, dwell: 1, sweeps: 1 })).toBeNull();
  });

  it('refuses a command that would run for more than a week', () => {
    // 800 steps × 20 ms × 2 × 10,000 = 3.7 days: allowed; at 40 ms, 7.4 days: refused.
    expect(sweepShapeViolation({ ...sweep, sweeps: 10_000 })).toBeNull();
    expect(sweepShapeViolation({ ...sweep, dwell: 40, sweeps: 10_000 })).toMatch(/7\.4 days; at most 7 days/);
  });
});

// Which phase a pass shows: the project's own rule (no outside source applies).
import { describe, expect, it } from 'vitest';
import { passPhase } from './pass-phase.ts';

describe('passPhase', () => {
  it('shows the phase at the middle of the pass where the stored fit has it, else φ at 0', () => {
    expect(passPhase({ phase: 0.49, phaseErr: 0.21, fit: { phaseAtCenter: { value: 1.2, err: 0.004 }, center: 62.5 } })).toEqual({ value: 1.2, err: 0.004, at: 62.5 });
    expect(passPhase({ phase: 0.49, phaseErr: 0.21, fit: { warnings: [] } })).toEqual({ value: 0.49, err: 0.21, at: null });
  });
});

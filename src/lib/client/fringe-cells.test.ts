// Fringe cells: passes split at the drive's turns, a hold adds nothing after its first second,
// and a hold's jump does not replace the fringes just swept. The project's own display rules
// (no outside source applies).
import { describe, expect, it } from 'vitest';
import { FringeCells } from './fringe-cells.ts';

const ramp = (from: number, to: number, n: number) => Array.from({ length: n }, (_, i) => from + ((to - from) * i) / (n - 1));

describe('FringeCells', () => {
  it('stops counting once the drive has held still for a second', () => {
    const cells = new FringeCells(0, 10);
    const x = ramp(0, 10, 500);
    cells.add(x, x.map(() => 5), x.map(() => 5), 1);
    const swept = cells.clicks();
    // Ten seconds of holding at the end of the sweep: only the first second counts.
    const held = new Array(10_000).fill(9.95);
    cells.add(held, held.map(() => 5), held.map(() => 5), 1);
    expect(cells.clicks() - swept).toBeLessThanOrEqual((1 + 1_000) * 10); // the first bin there, then one second
    expect(cells.clicks() - swept).toBeGreaterThan(0);
  });

  it("keeps showing the last sweep's direction after a hold's jump", () => {
    const cells = new FringeCells(0, 10);
    const up = ramp(0, 10, 500);
    cells.add(up, up.map(() => 1), up.map(() => 1), 1);
    const down = ramp(10, 2, 400);
    cells.add(down, down.map(() => 1), down.map(() => 1), 1);
    expect(cells.shownDirection()).toBe('down');
    // Hold at mid-fringe: one jump up to 5 V, then still.
    const hold = new Array(3_000).fill(5);
    cells.add(hold, hold.map(() => 1), hold.map(() => 1), 1);
    expect(cells.direction).toBe('up');
    expect(cells.shownDirection()).toBe('down');
    expect(cells.view().x.length).toBeGreaterThan(100);
  });
});

// Counts against the scan coordinate, accumulated into fixed x cells so fringes build up click by
// click: each cell holds the counts of both outputs and the time spent there, kept per pass for
// the last few passes of each direction (up and down differ by the piezo's hysteresis).

export const CELLS = 400;
/** The drive turning by more than this fraction of the range ends a pass. */
const TURN_FRACTION = 0.01;
/**
 * x unchanged for longer than this (ms) is the drive holding, not dwelling on a sweep step: those
 * bins are no fringe point, and piled into one cell they would only inflate the pass's clicks.
 */
const HOLD_MS = 1_000;
/** A pass is shown once it covers this many cells: a hold's jump alone starts no pass worth showing. */
const MIN_SHOWN_CELLS = 10;

export type Direction = 'up' | 'down';

interface PassCells {
  a: Float64Array;
  b: Float64Array;
  /** ms of bins in each cell */
  ms: Float64Array;
  clicks: number;
  /** Cells visited. */
  visited: number;
}

function newPass(): PassCells {
  return { a: new Float64Array(CELLS), b: new Float64Array(CELLS), ms: new Float64Array(CELLS), clicks: 0, visited: 0 };
}

export class FringeCells {
  readonly xMin: number;
  readonly xMax: number;
  /** Passes of each direction kept, newest last (a small ring reused in place). */
  private passes: Record<Direction, PassCells[]> = { up: [], down: [] };
  private keep: number;
  direction: Direction | null = null;
  /** Running extreme of x in the current direction (max going up, min going down). */
  private extremum = 0;
  /** Before the first pass: the range seen so far. */
  private lo = Infinity;
  private hi = -Infinity;
  /** The last x and how long (ms) it has not changed. */
  private lastX = Number.NaN;
  private sameMs = 0;
  /** Output arrays reused by every `view` call. */
  private readonly outX = new Float64Array(CELLS);
  private readonly outA = new Float64Array(CELLS);
  private readonly outB = new Float64Array(CELLS);

  constructor(xMin: number, xMax: number, keep = 3) {
    this.xMin = xMin;
    this.xMax = xMax > xMin ? xMax : xMin + 1;
    this.keep = keep;
  }

  setKeep(keep: number): void {
    this.keep = keep;
    for (const d of ['up', 'down'] as const) this.passes[d] = this.passes[d].slice(-keep);
  }

  clear(): void {
    this.passes = { up: [], down: [] };
    this.direction = null;
    this.lo = Infinity;
    this.hi = -Infinity;
    this.lastX = Number.NaN;
    this.sameMs = 0;
  }

  /**
   * Direction from the excursion since the last turning point, so dwell steps and jitter on x do
   * not flip it: a pass ends once x has come back `turn` from its extreme.
   */
  private track(x: number, turn: number): void {
    if (this.direction === null) {
      this.lo = Math.min(this.lo, x);
      this.hi = Math.max(this.hi, x);
      if (x > this.lo + turn) this.startPass('up', x);
      else if (x < this.hi - turn) this.startPass('down', x);
    } else if (this.direction === 'up') {
      if (x < this.extremum - turn) this.startPass('down', x);
      else this.extremum = Math.max(this.extremum, x);
    } else if (x > this.extremum + turn) this.startPass('up', x);
    else this.extremum = Math.min(this.extremum, x);
  }

  /** Bins of both outputs with their scan coordinate; dt in ms. */
  add(x: ArrayLike<number>, a: ArrayLike<number>, b: ArrayLike<number>, dt: number): void {
    const span = this.xMax - this.xMin;
    const turn = span * TURN_FRACTION;
    for (let i = 0; i < x.length; i++) {
      const xi = x[i]!;
      this.sameMs = xi === this.lastX ? this.sameMs + dt : 0;
      this.lastX = xi;
      if (this.sameMs > HOLD_MS) continue;
      this.track(xi, turn);
      if (!this.direction) continue;
      const cell = Math.floor(((xi - this.xMin) / span) * CELLS);
      if (cell < 0 || cell >= CELLS) continue;
      const pass = this.current()!;
      const ca = a[i]!;
      const cb = b[i]!;
      if (pass.ms[cell] === 0) pass.visited++;
      pass.a[cell]! += ca;
      pass.b[cell]! += cb;
      pass.ms[cell]! += dt;
      pass.clicks += ca + cb;
    }
  }

  private startPass(direction: Direction, x: number): void {
    this.direction = direction;
    this.extremum = x;
    const list = this.passes[direction];
    // Reuse the oldest pass's arrays once `keep` are held.
    const reused = list.length >= this.keep ? list.shift()! : null;
    if (reused) {
      reused.a.fill(0);
      reused.b.fill(0);
      reused.ms.fill(0);
      reused.clicks = 0;
      reused.visited = 0;
    }
    list.push(reused ?? newPass());
  }

  private current(): PassCells | undefined {
    return this.direction ? this.passes[this.direction].at(-1) : undefined;
  }

  /**
   * The direction on screen: the current one once its pass covers MIN_SHOWN_CELLS cells, else the
   * other while it holds a pass that does (a hold's jump does not blank the fringes just swept).
   */
  shownDirection(): Direction | null {
    const d = this.direction;
    if (!d) return null;
    const other: Direction = d === 'up' ? 'down' : 'up';
    const covers = (dir: Direction) => this.passes[dir].some((p) => p.visited >= MIN_SHOWN_CELLS);
    return (this.current()?.visited ?? 0) >= MIN_SHOWN_CELLS || !covers(other) ? d : other;
  }

  /** Clicks in the kept passes of the direction shown. */
  clicks(): number {
    const d = this.shownDirection();
    if (!d) return 0;
    let n = 0;
    for (const p of this.passes[d]) n += p.clicks;
    return n;
  }

  /**
   * The kept passes of the direction shown summed per cell, as rates (counts/s) at the cell
   * centres; cells never visited are left out. Views into reused arrays.
   */
  view(): { x: Float64Array; a: Float64Array; b: Float64Array; direction: Direction | null } {
    let len = 0;
    const direction = this.shownDirection();
    const list = direction ? this.passes[direction] : [];
    const w = (this.xMax - this.xMin) / CELLS;
    for (let c = 0; c < CELLS; c++) {
      let a = 0;
      let b = 0;
      let ms = 0;
      for (const p of list) {
        a += p.a[c]!;
        b += p.b[c]!;
        ms += p.ms[c]!;
      }
      if (ms <= 0) continue;
      this.outX[len] = this.xMin + (c + 0.5) * w;
      this.outA[len] = (a * 1000) / ms;
      this.outB[len] = (b * 1000) / ms;
      len++;
    }
    return { x: this.outX.subarray(0, len), a: this.outA.subarray(0, len), b: this.outB.subarray(0, len), direction };
  }
}

// An open-loop piezo actuator: drive voltage → mirror displacement, with hysteresis and a small
// quadratic nonlinearity. Pure and deterministic (no randomness: the actuator itself is not noisy
// at the scale of a fringe; the phase noise lives in the interferometer's drift).

export interface ScanRange {
  /** Lowest drive voltage the gateway accepts, V. */
  min: number;
  /** Highest drive voltage the gateway accepts, V. */
  max: number;
}

export interface PiezoModel {
  /** Calibration: mean slope over the full stroke (min → max), nm/V, as a lab measures it. */
  nmPerVolt: number;
  /**
   * Hysteresis of a full-stroke loop: largest up/down difference as a fraction of the stroke.
   * Open-loop stacks show 0.10–0.15 over the full stroke and about 0.02 for small signals
   * [practice]; the Rayleigh law below makes it grow in proportion to the excursion.
   */
  hysteresis: number;
  /**
   * Quadratic nonlinearity: the local slope runs from (1 − β) to (1 + β) times the calibration
   * across the stroke, keeping the full-stroke calibration exact. A few per cent is typical.
   */
  nonlinearity: number;
}

interface Reversal {
  v: number;
  y: number;
}

/** Deepest reversal memory kept; only ever-shrinking nested excursions grow it this far. */
const MAX_REVERSALS = 64;

/**
 * Hysteresis as a Rayleigh law with Madelung's rules (the Preisach model with uniform weight):
 * from the last reversal point (v_r, y_r), moving in direction s over u = |v − v_r| volts,
 *   y = y_r + s·(μ·u + ν·u²/2),
 * so every branch starts at the small-signal slope μ and steepens; minor loops close, and passing
 * an earlier reversal point wipes its loop out and resumes the older branch. y is in volts of
 * ideal travel from `min`. With μ + ν·S/2 = 1 (S the stroke) the full-stroke loop spans exactly
 * S, and its mid-stroke width is ν·S²/4, so ν = 4h/S and μ = 1 − 2h for hysteresis h. A loop of
 * span s has hysteresis ν·s/(4·(μ + ν·s/2)): ≈ 2% at a sixth of the stroke when h = 0.12.
 * Displacement d = k·y·(1 − β + β·y/S), whose slope goes from k(1 − β) to k(1 + β), d(S) = k·S.
 */
export class Piezo {
  private readonly mu: number;
  private readonly nu: number;
  private readonly stroke: number;
  private readonly reversals: Reversal[];
  private dir: 1 | -1 = 1;
  private v: number;
  private y: number;

  constructor(
    private readonly model: PiezoModel,
    range: ScanRange,
    startV: number,
  ) {
    this.stroke = range.max - range.min;
    this.mu = 1 - 2 * model.hysteresis;
    this.nu = (4 * model.hysteresis) / this.stroke;
    // Power up at `min` and ramp to the start: the state then lies on the full-stroke loop, and
    // every later drive within the range keeps it there.
    this.v = range.min;
    this.y = 0;
    this.reversals = [{ v: this.v, y: this.y }];
    this.moveTo(startV);
  }

  get voltage(): number {
    return this.v;
  }

  /** Drives monotonically from the present voltage to `v`. */
  moveTo(v: number): void {
    if (v === this.v) return;
    const s = v > this.v ? 1 : -1;
    const rev = this.reversals;
    if (s !== this.dir) {
      rev.push({ v: this.v, y: this.y });
      this.dir = s;
      if (rev.length > MAX_REVERSALS) rev.splice(1, 2);
    }
    // Wipe out: passing the reversal that began the enclosing branch returns to the older branch.
    while (rev.length >= 3 && s * (v - rev[rev.length - 2]!.v) >= 0) rev.length -= 2;
    const o = rev[rev.length - 1]!;
    const u = s * (v - o.v);
    this.y = o.y + s * (this.mu * u + 0.5 * this.nu * u * u);
    this.v = v;
  }

  /** Mirror displacement from its position at `min`, nm. */
  get displacementNm(): number {
    const beta = this.model.nonlinearity;
    return this.model.nmPerVolt * this.y * (1 - beta + (beta * this.y) / this.stroke);
  }

  /** Local slope dd/dV on the present branch, nm/V (what sets the local fringe period). */
  get slopeNmPerVolt(): number {
    const o = this.reversals[this.reversals.length - 1]!;
    const dydv = this.mu + this.nu * Math.abs(this.v - o.v);
    const beta = this.model.nonlinearity;
    return this.model.nmPerVolt * dydv * (1 - beta + (2 * beta * this.y) / this.stroke);
  }
}

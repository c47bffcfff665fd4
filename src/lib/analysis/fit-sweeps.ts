// A scan record to fitted passes: split into monotonic sweeps, fit each one on its own.
import { fitFringes, type FringeFitOptions, type FringeFitResult } from './fringe-fit.ts';
import { splitSweeps, type SweepDirection, type SweepSplitOptions } from './sweep-split.ts';

export interface FitSweepsInput {
  /** Scan coordinate per bin. */
  x: ArrayLike<number>;
  countsA: ArrayLike<number>;
  countsB: ArrayLike<number>;
  /** Start time of each bin, ms since the epoch; gives each pass its time span. */
  timesMs?: ArrayLike<number>;
  /** Bin length, ms: the end of a pass is its last bin's start plus this. */
  binMs?: number;
  fit?: FringeFitOptions;
  split?: SweepSplitOptions;
}

export interface FittedSweep {
  /** Bin range [start, end) of the pass in the input. */
  start: number;
  end: number;
  direction: SweepDirection;
  /** Time span of the pass, ms since the epoch; null without timesMs. */
  startMs: number | null;
  endMs: number | null;
  fit: FringeFitResult;
}

/** Fit every monotonic pass of the record, in order. */
export function fitSweeps(input: FitSweepsInput): FittedSweep[] {
  const { x, countsA, countsB, timesMs } = input;
  if (countsA.length !== x.length || countsB.length !== x.length) throw new RangeError('x, countsA and countsB differ in length');
  if (timesMs && timesMs.length !== x.length) throw new RangeError('timesMs differs in length from x');
  const slice = (a: ArrayLike<number>, s: number, e: number): Float64Array => Float64Array.from({ length: e - s }, (_, i) => a[s + i] as number);
  return splitSweeps(x, input.split).map((pass) => {
    const fit = fitFringes({ x: slice(x, pass.start, pass.end), countsA: slice(countsA, pass.start, pass.end), countsB: slice(countsB, pass.start, pass.end) }, input.fit);
    return {
      ...pass,
      startMs: timesMs ? (timesMs[pass.start] as number) : null,
      endMs: timesMs ? (timesMs[pass.end - 1] as number) + (input.binMs ?? 0) : null,
      fit,
    };
  });
}

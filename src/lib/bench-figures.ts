// The live figures the server computes for a bench (about once a second) and pushes to its
// viewers. Pure types shared by the server and the islands.

export interface ValueErr {
  value: number;
  err: number;
}

export interface ChannelFigures {
  /** "<gateway>/<key>" */
  channel: string;
  role: 'out_a' | 'out_b' | 'herald' | 'aux';
  label: string;
  /** Measured rate over the window, counts/s. */
  rateRaw: number;
  /** Dead-time- then dark-corrected rate, counts/s; null when the correction is refused (see warning). */
  rateCorrected: ValueErr | null;
  /** Fraction of true counts lost to dead time (m·τ for the non-paralyzable model). */
  deadTimeLoss: number | null;
  /** Mandel Q of the counts per bin over the window, its variance from adjacent bins. */
  mandelQ: ValueErr | null;
  warning: string | null;
}

export interface BenchFigures {
  benchId: string;
  /** End of the window, ms since the epoch. */
  at: number;
  windowMs: number;
  channels: ChannelFigures[];
  /**
   * Latest visibility: the inverse-variance mean of the last fitted passes (`passes` of them, the
   * newest centred on `latestPassMs`, with its own V and its end as `newest`; older snapshots lack
   * all three), or an envelope estimate while the phase drifts through whole fringes.
   */
  visibility:
    | (ValueErr & {
        source: 'sweep' | 'envelope';
        net: boolean;
        latestPassMs?: number | undefined;
        newest?: (ValueErr & { endMs?: number | undefined }) | undefined;
        passes?: number | undefined;
      })
    | null;
  /** Whether the drive held still over the last second (or sends no positions): phase and phase noise are read only then (older snapshots lack it). */
  holding?: boolean | undefined;
  /** Phase at hold (rad) with drift rate (rad/s). */
  phase: (ValueErr & { driftRadPerS: number | null; driftErrRadPerS?: number | undefined }) | null;
  /** (N_a − N_b)/(N_a + N_b) over the last second: the mid-fringe error signal is 0 at quadrature. */
  contrast: number | null;
  /** g2(0) = N_c/N_acc: the coincidences divided by the accidentals uncorrelated light would give (summed bin by bin), not background-subtracted. */
  g2: (ValueErr & { accidentals: number }) | null;
  /** The full coincidence window g2(0)'s accidentals were computed with, ns (the bench's setting; older snapshots lack it). */
  coincidenceWindowNs?: number | undefined;
  /** Heralded anticorrelation parameter α. */
  alpha: ValueErr | null;
  /**
   * Phase noise per bin of `binMs` against the shot-noise limit for the photons of such a bin, read
   * over the `bins` of the present hold near mid-fringe in the live window, each second about its own
   * straight line (its steady drift is the phase's drift rate, not noise). Older snapshots lack
   * `binMs`, `bins` and `ratioErr`, and those before `bins` read the last second about its mean.
   */
  shotNoise: {
    measuredRad: number;
    /** 1/√N for the N signal photons of a bin: the shot-noise limit at visibility 1. */
    limitRad: number;
    ratio: number;
    /** 1σ of `ratio` from the bins the noise was read over, ratio/√(2·dof): what readings sharing no bins scatter by. */
    ratioErr?: number | undefined;
    dB: number;
    binMs?: number | undefined;
    /** Bins the noise was read over. */
    bins?: number | undefined;
    /** 1/√F(φ): the floor at the bench's visibility and operating point (phaseFloor), 1/(V√N) at mid-fringe without darks (older snapshots: always 1/(V√N)). */
    visibilityLimitRad?: number | undefined;
    /**
     * Where the outputs' dark rates are set, `visibilityLimitRad` counts their dark counts as noise
     * beside the signal, and this is the floor without them: what the visibility alone costs. Absent
     * without dark rates, and on older snapshots, whose floor left the darks out.
     */
    darkFreeLimitRad?: number | undefined;
  } | null;
}

/**
 * When the newest fitted pass ended, as the fringe card counts its last fit's age; figures from
 * before the pass's end was sent give its middle. Undefined without a fitted pass.
 */
export function newestPassAt(v: NonNullable<BenchFigures['visibility']>): number | undefined {
  return v.source === 'sweep' ? (v.newest?.endMs ?? v.latestPassMs) : undefined;
}

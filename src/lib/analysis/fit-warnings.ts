// The warnings a fringe fit can carry (fringe-fit.ts). Stored with each fitted pass as text, so the
// screens that show them recognise the one that changes how a pass reads by this same text.

export const FIT_WARNING = {
  notConverged: 'the fit did not converge within the iteration limit',
  atBound: 'visibility at its physical bound 1: the interval is one-sided',
  /** The fringe term does not lower the Cash statistic enough: V ± σ is no measurement of a fringe. */
  noFringe: 'no significant fringe: the outputs are consistent with flat counts',
} as const;

// Public API of the analysis engine: pure functions, no I/O. Server code runs the fits through
// src/lib/server/analysis-worker.ts so they stay off the ingest event loop.
export type { Measured } from './measured.ts';
export { lnGamma, gammaP, gammaQ, gammaPInv, chiSquareCdf, chiSquareSf, chiSquareQuantile, normalCdf, ONE_SIGMA_CL } from './special-functions.ts';
export { lambertW0 } from './lambert-w.ts';
export { garwoodInterval, garwoodRateInterval, type PoissonInterval } from './poisson-intervals.ts';
export { correctDeadTime, DEAD_TIME_LOSS_WARNING, type DeadTimeModel, type DeadTimeResult } from './dead-time.ts';
export { correctRate, rateFromCounts, relativeEfficiency, type DeadTimeSetting, type RateCorrection, type RateCorrectionInput } from './corrections.ts';
export { splitSweeps, type SweepDirection, type SweepPass, type SweepSplitOptions } from './sweep-split.ts';
export { outputProbabilities, expectedCounts, fringePhase, type FringeParams } from './fringe-model.ts';
export {
  fitFringes,
  wrapPhase,
  LOW_COUNT_TOTAL,
  fringeDetectionThreshold,
  type FringeData,
  type FringeFit,
  type FringeFitOptions,
  type FringeFitResult,
  type IntervalMethod,
  type OutputVisibility,
  type VisibilityEstimate,
} from './fringe-fit.ts';
export { fitSweeps, type FitSweepsInput, type FittedSweep } from './fit-sweeps.ts';
export { piezoCalibration, PATH_FACTORS } from './piezo.ts';
export { runningVisibility, envelopeVisibility, visibilityTrend, type EnvelopeEstimate, type VisibilityPoint, type VisibilityTrend } from './running-visibility.ts';
export { normalizedDifference, phaseAtHold, quadratureError, unwrapPhase, unfoldPhase, driftRate, type HoldCalibration, type UnfoldOptions } from './phase.ts';
export { mandelQ, poissonQThroughDeadTime, g2FromCoincidences, heraldedAlpha, type CoincidenceInput, type G2Result, type HeraldedInput, type MandelQ } from './photon-stats.ts';
export { allanAt, allanDeviation, type AllanPoint } from './allan.ts';
export { phaseSensitivity, phaseFisherPerPhoton, phaseFloor, squeezingDb, type NoiseSegment, type PhaseSensitivity } from './sensitivity.ts';

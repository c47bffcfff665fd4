// Types for the reference library the tests check against; it ships none. Only what the tests use.
declare module 'jstat' {
  const jStat: {
    chisquare: { inv(p: number, dof: number): number; cdf(x: number, dof: number): number };
    /** Regularized lower incomplete gamma P(a, x) (jstat's `gammap` is the unregularized γ). */
    lowRegGamma(a: number, x: number): number;
    gammapinv(p: number, a: number): number;
    gammaln(x: number): number;
    normal: { cdf(x: number, mean: number, sd: number): number };
  };
  export default jStat;
}

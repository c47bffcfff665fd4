/** A value with its one-standard-deviation uncertainty, in the same unit. */
export interface Measured {
  value: number;
  err: number;
}

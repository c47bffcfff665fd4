// Which visibility of a stored sweep to show, alarm on and average: one rule for the server and the
// islands. A sweep carries the raw V (what the counts show) and, where the outputs' darks were
// calibrated, the net V with its own error; the two must never be mixed (the net V is the higher
// and the less certain).

export interface SweepVisibilities {
  visibility: number;
  visibilityErr: number;
  visibilityNet?: number | null | undefined;
  /** Absent on sweeps stored before the net error was kept: those count as raw only. */
  visibilityNetErr?: number | null | undefined;
}

export interface ShownVisibility {
  value: number;
  err: number;
  /** True when dark-subtracted ("net of darks"). */
  net: boolean;
}

/** Net V with its net error where the darks were calibrated, else raw V with the raw error. */
export function shownVisibility(s: SweepVisibilities): ShownVisibility {
  if (s.visibilityNet != null && s.visibilityNetErr != null) return { value: s.visibilityNet, err: s.visibilityNetErr, net: true };
  return { value: s.visibility, err: s.visibilityErr, net: false };
}

/** What a list of sweeps' shown visibilities are, in words for a chart's caption; null when empty. */
export function visibilityBasis(list: readonly SweepVisibilities[]): string | null {
  if (list.length === 0) return null;
  const net = list.filter((s) => shownVisibility(s).net).length;
  if (net === list.length) return 'net of darks';
  if (net === 0) return 'raw (no dark subtraction)';
  // Darks calibrated (or cleared) within the list: the two kinds differ by the darks, so say so.
  return `net of darks for ${net} of ${list.length} passes, raw for the rest`;
}

// A bench channel with the corrections the analysis applies to it. Pure: shared by the server
// (figures, fits, CSV metadata, run reports) and the islands.

export type ChannelRole = 'out_a' | 'out_b' | 'herald' | 'aux';

export interface ChannelCalibration {
  gateway: string;
  key: string;
  label: string;
  role: ChannelRole;
  /** counts/s and its 1σ; null when not measured. */
  darkRate: number | null;
  darkRateErr: number | null;
  deadTimeNs: number | null;
  deadTimeModel: 'nonparalyzable' | 'paralyzable';
  /** Detection efficiency relative to the bench's other outputs. */
  efficiency: number;
}

/** The channel's dead time in s and its model as the analysis names it; null without one. */
export function channelDeadTime(c: Pick<ChannelCalibration, 'deadTimeNs' | 'deadTimeModel'>): { tau: number; model: 'non-paralyzable' | 'paralyzable' } | null {
  return c.deadTimeNs ? { tau: c.deadTimeNs * 1e-9, model: c.deadTimeModel === 'paralyzable' ? 'paralyzable' : 'non-paralyzable' } : null;
}

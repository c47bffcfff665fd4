// Per-gateway health counters gathered during one write, applied in the same transaction. The
// sequence check is here: a `seq` jump within one boot is counted as possible loss.
export interface RejectNote {
  at: number;
  reason: string;
}

export interface HealthDelta {
  accepted: number;
  duplicates: number;
  rejected: number;
  refused: number;
  seqGaps: number;
  /** Newest first. */
  rejects: RejectNote[];
  lastBoot: string | null;
  lastSeq: number | null;
  clockOffsetMs: number | null;
}

export const MAX_REJECT_NOTES = 20;

export function emptyDelta(): HealthDelta {
  return { accepted: 0, duplicates: 0, rejected: 0, refused: 0, seqGaps: 0, rejects: [], lastBoot: null, lastSeq: null, clockOffsetMs: null };
}

export function noteReject(d: HealthDelta, reason: string, at: number): void {
  d.rejects.unshift({ at, reason });
  if (d.rejects.length > MAX_REJECT_NOTES) d.rejects.length = MAX_REJECT_NOTES;
}

/**
 * Advances the sequence state with one batch and returns the number of missing batches it reveals.
 * A new boot restarts the count; a seq at or below the last one (a re-send) reveals nothing.
 */
export function seqAdvance(state: { boot: string | null; seq: number | null }, boot: string, seq: number): number {
  if (state.boot !== boot || state.seq === null) {
    state.boot = boot;
    state.seq = seq;
    return 0;
  }
  if (seq <= state.seq) return 0;
  const gap = seq - state.seq - 1;
  state.seq = seq;
  return gap;
}

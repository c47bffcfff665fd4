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
  // Kept in jsonb, which holds neither U+0000 nor a lone surrogate (a payload's own "\ud800", or a
  // pair cut by a reason's length cap): the NUL is written out and a lone surrogate becomes U+FFFD,
  // so the note, and the count written in the same statement, are always stored.
  d.rejects.unshift({ at, reason: reason.replaceAll('\0', '\\u0000').toWellFormed() });
  if (d.rejects.length > MAX_REJECT_NOTES) d.rejects.length = MAX_REJECT_NOTES;
}

/** Seqs remembered as missing per gateway; a longer gap counts in full but only its first ones can be taken back. */
export const MAX_MISSING_TRACKED = 10_000;

export interface SeqState {
  boot: string | null;
  seq: number | null;
  /** Seqs skipped within this boot and not seen since (in memory: a restart forgets them). */
  missing?: Set<number>;
}

/**
 * Advances the sequence state with one batch and returns the change in missing batches it reveals:
 * a jump adds the seqs skipped; a late batch that fills one of them takes it back (a replay after
 * an outage or a re-send can overtake live batches, and that is no loss). A new boot restarts the
 * count; a seq seen before (a re-send) changes nothing.
 */
export function seqAdvance(state: SeqState, boot: string, seq: number): number {
  if (state.boot !== boot || state.seq === null) {
    state.boot = boot;
    state.seq = seq;
    state.missing = new Set();
    return 0;
  }
  if (seq <= state.seq) return state.missing?.delete(seq) ? -1 : 0;
  const gap = seq - state.seq - 1;
  state.missing ??= new Set();
  for (let s = state.seq + 1; s < seq && state.missing.size < MAX_MISSING_TRACKED; s++) state.missing.add(s);
  state.seq = seq;
  return gap;
}

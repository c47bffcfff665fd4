// When the live hub's next frame to a bench goes out. Pure.

/**
 * Shortest time between two frames to a bench's live clients (ms). A frame goes out at once when
 * the previous one is older; otherwise messages gather until then. 10 ms caps socket writes at
 * about 100 a second per client while keeping publish → browser near the 20 ms budget over the
 * broker.
 */
export const FRAME_MS = 10;

/**
 * How long the next frame may still wait (ms): until a frame period has passed since the last
 * one, but not at all for a `late` message, a batch that already waited a frame period for its
 * write. Late batches are the p99 tail, a few in a hundred: the extra frames cost little, and the
 * tail no longer waits for the frame slot too (DEVELOPERS.md, "Ingest benchmark").
 */
export function frameDelay(lastFrameAt: number, now: number, late: boolean): number {
  return late ? 0 : Math.max(0, lastFrameAt + FRAME_MS - now);
}

/** Whether a batch that reached the ingest at `arrivedAt` is late when stored at `storedAt` (ms). */
export const isLate = (arrivedAt: number, storedAt: number) => storedAt - arrivedAt >= FRAME_MS;

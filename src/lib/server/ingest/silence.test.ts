import { describe, expect, it } from 'vitest';
import { SILENT_FLOOR_MS, SilenceTracker, silentAfterMs } from './silence.ts';

// The bounds come from the wire contract (a bin is at most 60 s wide, shared/contract.md).
describe('when an online gateway counts as silent', () => {
  it('waits twice the widest bin, or twice a longer batch span', () => {
    expect(SILENT_FLOOR_MS).toBe(120_000);
    expect(silentAfterMs(100)).toBe(120_000);
    // Ten bins of 60 s per batch: the next batch comes about ten minutes later.
    expect(silentAfterMs(600_000)).toBe(1_200_000);
  });

  it('calls an online gateway silent once, past its bound, and heard again at its next word', () => {
    const t = new SilenceTracker(0);
    t.status('gw', 'bench', true, 1_000);
    t.heard('gw', 'bench', 2_000, 100);
    expect(t.due(2_000 + SILENT_FLOOR_MS)).toEqual([]);
    expect(t.due(2_001 + SILENT_FLOOR_MS)).toEqual([{ bench: 'bench', gateway: 'gw', silentSince: 2_000 }]);
    expect(t.silentSince('gw')).toBe(2_000);
    // Announced once per silence.
    expect(t.due(10 * SILENT_FLOOR_MS)).toEqual([]);
    expect(t.heard('gw', 'bench', 10 * SILENT_FLOOR_MS)).toEqual({ bench: 'bench', gateway: 'gw', silentSince: null });
    expect(t.silentSince('gw')).toBeNull();
    expect(t.heard('gw', 'bench', 10 * SILENT_FLOOR_MS + 100)).toBeNull();
  });

  it('waits longer for a gateway whose batches span longer', () => {
    const t = new SilenceTracker(0);
    t.status('gw', 'bench', true, 0);
    t.heard('gw', 'bench', 0, 300_000);
    expect(t.due(600_000)).toEqual([]);
    expect(t.due(600_001)).toHaveLength(1);
  });

  it('never calls an offline gateway silent, and a status ends a silence without a change of its own', () => {
    const t = new SilenceTracker(0);
    t.heard('quiet', 'bench', 0);
    t.status('gw', 'bench', true, 0);
    expect(t.due(SILENT_FLOOR_MS + 1).map((c) => c.gateway)).toEqual(['gw']);
    // Its last will: offline, and no longer silent (the status itself is announced).
    t.status('gw', 'bench', false, SILENT_FLOOR_MS + 2);
    expect(t.silentSince('gw')).toBeNull();
    expect(t.due(10 * SILENT_FLOOR_MS)).toEqual([]);
    expect(t.heard('gw', 'bench', 10 * SILENT_FLOOR_MS)).toBeNull();
  });

  it('judges gateways known at start only on the time since the server began to listen', () => {
    const start = 1_000_000;
    const t = new SilenceTracker(start);
    t.know('gw', 'bench', 0);
    expect(t.due(start + SILENT_FLOOR_MS)).toEqual([]);
    // Past the bound after the start: silent since it was last heard, before the start.
    expect(t.due(start + SILENT_FLOOR_MS + 1)).toEqual([{ bench: 'bench', gateway: 'gw', silentSince: 0 }]);
  });

  it('forgets a revoked gateway', () => {
    const t = new SilenceTracker(0);
    t.status('gw', 'bench', true, 0);
    t.forget('gw');
    expect(t.due(10 * SILENT_FLOOR_MS)).toEqual([]);
  });
});

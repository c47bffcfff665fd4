// Several BatchWriters side by side, each owning a fixed share of the gateways (by a hash of the
// id). Everything one write touches is per gateway (its rows, rollups, health, channels, seq state),
// so partitioning by gateway keeps every guarantee of a single writer: spans of one gateway are
// still planned and stored by one writer in order. Two writers overlap one transaction's database
// time with the next one's preparation in Node (at saturation the event loop sat idle ~25 % of the
// time waiting on the single write in flight).
import type { CountBatch } from '../../contract/wire.ts';
import { BatchWriter, type BatchOutcome, type StoredEvent } from './store.ts';

/** Writers (database connections) for ingest; the machine has 2 cores and the pool holds 10 connections. */
export const INGEST_WRITERS = 2;

function hashOf(id: string): number {
  let h = 2166136261; // FNV-1a, 32 bit
  for (let i = 0; i < id.length; i++) h = Math.imul(h ^ id.charCodeAt(i), 16777619);
  return h >>> 0;
}

export class WriterPool {
  private readonly writers: BatchWriter[];

  constructor(onStored: (e: StoredEvent) => void, count = INGEST_WRITERS) {
    this.writers = Array.from({ length: count }, () => new BatchWriter(onStored));
  }

  private of(gatewayId: string): BatchWriter {
    return this.writers[hashOf(gatewayId) % this.writers.length]!;
  }

  submit(gatewayId: string, batch: CountBatch, arrivedAt = Date.now()): Promise<BatchOutcome> {
    return this.of(gatewayId).submit(gatewayId, batch, arrivedAt);
  }

  reject(gatewayId: string, reason: string): Promise<void> {
    return this.of(gatewayId).reject(gatewayId, reason);
  }

  refused(gatewayId: string, reason: string): Promise<void> {
    return this.of(gatewayId).refused(gatewayId, reason);
  }

  /** Resolves when everything submitted so far to any writer is written. */
  async flushed(): Promise<void> {
    await Promise.all(this.writers.map((w) => w.flushed()));
  }
}

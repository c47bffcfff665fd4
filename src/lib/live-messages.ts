// The live WebSocket protocol (`/api/v1/live?bench=`), shared by the server hub and the browser's
// socket module. Pure: no I/O, safe to bundle into islands. The `counts` shape is fixed by the wire
// contract; the other message types are ours.
import { z } from 'zod';
import { benchIdSchema, gatewayIdSchema, MAX_EPOCH_MS } from './contract/wire.ts';

/** One stored batch (or several contiguous ones merged), as the contract's count message. */
export interface CountsMessage {
  type: 'counts';
  bench: string;
  gateway: string;
  /** Start of the first bin, ms since the epoch. */
  t0: number;
  /** Bin width, ms. */
  dt: number;
  ch: Record<string, number[]>;
  x?: number[];
  cc?: number[];
}

export interface StatusMessage {
  type: 'status';
  bench: string;
  gateway: string;
  state: 'online' | 'offline';
  /** Server time the status arrived, ms since the epoch. */
  at: number;
  /**
   * Set when the server says so itself, not the gateway: its status reads online, but nothing has
   * arrived from it for too long (ingest/silence.ts). When it was last heard, ms since the epoch.
   */
  silentSince?: number;
  channels?: string[];
  scan?: { min: number; max: number; unit: string };
  software?: string;
}

/**
 * What a status socket for all benches (`watch=status&all=1`) sends first, one per bench: its
 * gateways and whether each is online as it connects. The `status` messages after it are newer.
 */
export interface PresenceMessage {
  type: 'presence';
  bench: string;
  gateways: { id: string; online: boolean; silentSince?: number }[];
}

export const presenceMessageSchema = z.object({
  type: z.literal('presence'),
  bench: benchIdSchema,
  gateways: z.array(z.object({ id: gatewayIdSchema, online: z.boolean(), silentSince: z.number().int().min(0).max(MAX_EPOCH_MS).optional() })),
});

export interface AckMessage {
  type: 'ack';
  bench: string;
  gateway: string;
  id: string;
  ok: boolean;
  error?: string;
}

/**
 * The server dropped count messages for this client because it did not keep up. `from`/`to`
 * bound the bin times lost (ms); the client may send `resume` with `since: from` to refetch them.
 */
export interface DroppedMessage {
  type: 'dropped';
  bench: string;
  messages: number;
  from: number;
  to: number;
}

/** Ends the replay that answers a `resume`; `complete: false`: it began later than asked (it reaches back 24 h at most). */
export interface ResumedMessage {
  type: 'resumed';
  bench: string;
  since: number;
  until: number;
  batches: number;
  complete: boolean;
}

/** A client message the server could not accept. */
export interface ErrorMessage {
  type: 'error';
  error: string;
}

/** Anything another feature (fits, alarms, …) pushes through `hub.publish`. */
export interface FeatureMessage {
  type: string;
  bench: string;
  [field: string]: unknown;
}

/**
 * The fields of a `status` message an island acts on, checked before use like every other pushed
 * message (the rest of it is the gateway's own announcement).
 */
export const statusMessageSchema = z.object({
  type: z.literal('status'),
  bench: benchIdSchema,
  gateway: gatewayIdSchema,
  state: z.enum(['online', 'offline']),
  silentSince: z.number().int().min(0).max(MAX_EPOCH_MS).optional(),
});

/** The fields of an `ack` message the drive controls act on: which command, and the gateway's verdict. */
export const ackMessageSchema = z.object({
  type: z.literal('ack'),
  gateway: gatewayIdSchema,
  id: z.string().min(1).max(100),
  ok: z.boolean(),
  error: z.string().max(1000).optional(),
});

export type LiveMessage = CountsMessage | StatusMessage | PresenceMessage | AckMessage | DroppedMessage | ResumedMessage | ErrorMessage;

/** Messages a client may send. */
export const clientMessageSchema = z.discriminatedUnion('type', [
  z.object({ type: z.literal('resume'), since: z.number().int().min(0).max(MAX_EPOCH_MS) }),
]);
export type ClientMessage = z.infer<typeof clientMessageSchema>;

export const LIVE_PATH = '/api/v1/live';

// The one place that knows the wire contract, version 1 (shared/contract.md): topics and payload
// schemas for gateways, the server and outside tools. Pure: no I/O.
import { z } from 'zod';
import * as z4 from 'zod/v4';

export const CONTRACT_VERSION = 1;
export const MAX_PAYLOAD_BYTES = 256 * 1024;
export const MAX_BINS = 10_000;
/** The widest bin a count batch may have (its `dt`), ms. */
export const MAX_BIN_MS = 60_000;
export const MAX_COUNT = 2 ** 31 - 1;
export const DEFAULT_PREFIX = 'fringewise/v1';
/**
 * The last instant a JavaScript Date can hold, ms since the epoch (ECMAScript, "Time Values and
 * Time Range": ±8.64e15). A bin time past it could be stored but not shown as a date.
 */
export const MAX_EPOCH_MS = 8.64e15;

const CHANNEL_KEY = /^[a-z0-9_]{1,16}$/;

/**
 * Text the server stores (boot ids, software and unit names, command errors) may not hold U+0000
 * or a lone surrogate (JSON's "\ud800", no character and not writable as UTF-8): PostgreSQL's text
 * and jsonb cannot hold the first, jsonb refuses the second, so such a message is refused whole
 * here, with these reasons, instead of failing half-way through a write.
 */
const NUL_REASON = 'must not contain the NUL character (U+0000)';
const LONE_SURROGATE_REASON = 'must not contain a lone surrogate (\\ud800–\\udfff without its pair)';
const hasNoNul = (s: string) => !s.includes('\0');
const isWellFormed = (s: string) => s.isWellFormed();
/** A stored string of `min`–`max` characters, without NUL or lone surrogates. */
const text = (min: number, max: number) => z.string().min(min).max(max).refine(hasNoNul, NUL_REASON).refine(isWellFormed, LONE_SURROGATE_REASON);

/** `s` cut to at most `max` UTF-16 units, ending in "…" when cut, never between a surrogate pair. */
function clip(s: string, max: number): string {
  if (s.length <= max) return s;
  let end = max - 1;
  const last = s.charCodeAt(end - 1);
  if (last >= 0xd800 && last <= 0xdbff) end -= 1;
  return s.slice(0, end) + '…';
}
/**
 * Free text the contract sets no length for (software and unit names, command errors): kept up to
 * `max` characters and cut beyond, so a long error still reaches the operator and a long firmware
 * name does not cost the gateway its status.
 */
const freeText = (max: number) => z.string().refine(hasNoNul, NUL_REASON).refine(isWellFormed, LONE_SURROGATE_REASON).transform((s) => clip(s, max));

/** Bench and gateway ids (they name MQTT topics and URLs), and the rule in words for messages. */
export const ID_PATTERN = /^[a-z0-9][a-z0-9-]{0,39}$/;
export const ID_RULE = '1–40 lower-case letters, digits or hyphens, starting with a letter or digit';
export const gatewayIdSchema = z.string().regex(ID_PATTERN, `id must be ${ID_RULE}`);
export const benchIdSchema = gatewayIdSchema;
export const channelKeySchema = z.string().regex(CHANNEL_KEY, 'channel key must match [a-z0-9_]{1,16}');

/** Why the array is not a valid count array, with the bad element's index; null when it is. */
function countArrayFault(a: unknown, minLen: number): { message: string; at?: number } | null {
  if (!Array.isArray(a)) return { message: 'counts must be an array' };
  if (a.length < minLen) return { message: 'a channel needs at least one bin' };
  if (a.length > MAX_BINS) return { message: `at most ${MAX_BINS} bins` };
  for (let i = 0; i < a.length; i++) {
    const v: unknown = a[i];
    if (typeof v !== 'number' || !Number.isInteger(v)) return { message: 'counts must be integers', at: i };
    if (v < 0) return { message: 'counts must be ≥ 0', at: i };
    if (v > MAX_COUNT) return { message: 'count above 2^31−1', at: i };
  }
  return null;
}

/** A custom issue that ends the parse, so the batch-level check never sees a malformed field. */
function fail(ctx: z4.RefinementCtx, message: string, path: (string | number)[] = []): void {
  ctx.addIssue({ code: 'custom', message, path, continue: false });
}

/**
 * `ch` checked in one plain pass (keys, arrays, counts, equal lengths): per-element number
 * schemas inside a record cost ~35 µs per 4 × 100-count batch in zod 3. Same rules; the issue path
 * ends at the bad element.
 */
const channelsSchema = z4.custom<Record<string, number[]>>().superRefine((ch, ctx) => {
  if (typeof ch !== 'object' || ch === null || Array.isArray(ch)) return fail(ctx, 'ch must be an object');
  let n = -1;
  for (const key of Object.keys(ch)) {
    if (!CHANNEL_KEY.test(key)) return fail(ctx, `bad channel key "${key.slice(0, 20)}"`, [key]);
    const fault = countArrayFault(ch[key], 1);
    if (fault) return fail(ctx, fault.message, fault.at === undefined ? [key] : [key, fault.at]);
    if (n >= 0 && ch[key]!.length !== n) return fail(ctx, 'channel arrays differ in length', [key]);
    n = ch[key]!.length;
  }
  if (n < 0) fail(ctx, 'ch must hold at least one channel');
});

const ccSchema = z4.custom<number[]>().superRefine((cc, ctx) => {
  const fault = countArrayFault(cc, 0);
  if (fault) fail(ctx, fault.message, fault.at === undefined ? [] : [fault.at]);
});

const xSchema = z4.custom<number[]>().superRefine((x, ctx) => {
  if (!Array.isArray(x)) return fail(ctx, 'x must be an array');
  for (let i = 0; i < x.length; i++) if (!Number.isFinite(x[i])) return fail(ctx, 'x values must be finite numbers', [i]);
});

/**
 * The one schema on the ingest's hot path, in zod 4's API (stack notes: app code may use it via
 * `zod/v4`): it parses a 4 × 100-count batch in ~2.4 µs against ~8.3 µs for the same rules in
 * zod 3, a tenth of the server's time per message at saturation (DEVELOPERS.md, "Ingest benchmark").
 */
export const countBatchSchema = z4
  .object({
    v: z4.literal(CONTRACT_VERSION),
    boot: z4.string().min(1).max(32).refine(hasNoNul, NUL_REASON).refine(isWellFormed, LONE_SURROGATE_REASON),
    seq: z4.number().int().min(0).max(Number.MAX_SAFE_INTEGER),
    t0: z4.number().int().min(0).max(MAX_EPOCH_MS),
    dt: z4.number().int().min(1).max(MAX_BIN_MS),
    ch: channelsSchema,
    x: xSchema.optional(),
    cc: ccSchema.optional(),
  })
  .superRefine((b, ctx) => {
    const n = Object.values(b.ch)[0]!.length;
    if (b.x && b.x.length !== n) ctx.addIssue({ code: 'custom', path: ['x'], message: 'x length differs from the channels' });
    if (b.cc && b.cc.length !== n) ctx.addIssue({ code: 'custom', path: ['cc'], message: 'cc length differs from the channels' });
    if (b.t0 % b.dt !== 0) ctx.addIssue({ code: 'custom', path: ['t0'], message: 't0 is not a multiple of dt' });
    if (b.t0 + n * b.dt > MAX_EPOCH_MS) ctx.addIssue({ code: 'custom', path: ['t0'], message: 'the bins end past the last representable date' });
  });
export type CountBatch = z4.infer<typeof countBatchSchema>;

export const statusSchema = z.object({
  v: z.literal(CONTRACT_VERSION),
  state: z.enum(['online', 'offline']),
  boot: text(1, 32).optional(),
  channels: z.array(channelKeySchema).max(64).optional(),
  scan: z.object({ min: z.number().finite(), max: z.number().finite(), unit: freeText(16) }).optional(),
  software: freeText(100).optional(),
});
export type GatewayStatus = z.infer<typeof statusSchema>;

const finite = z.number().finite();
export const commandBodySchema = z.discriminatedUnion('op', [
  z.object({
    op: z.literal('sweep'),
    from: finite,
    to: finite,
    step: finite.positive(),
    dwell: z.number().int().min(1).max(60_000),
    sweeps: z.number().int().min(1).max(10_000),
  }),
  z.object({ op: z.literal('hold'), x: finite }),
  z.object({ op: z.literal('stop') }),
]);
export type CommandBody = z.infer<typeof commandBodySchema>;
export type Command = CommandBody & { v: 1; id: string };

export const ackSchema = z.object({
  v: z.literal(CONTRACT_VERSION),
  id: text(1, 100),
  ok: z.boolean(),
  error: freeText(1000).optional(),
});
export type Ack = z.infer<typeof ackSchema>;

export type TopicKind = 'counts' | 'status' | 'cmd' | 'ack';

export function topicFor(gw: string, kind: TopicKind, prefix = DEFAULT_PREFIX): string {
  return `${prefix}/${gw}/${kind}`;
}

/** Splits `prefix/{gw}/{kind}`; null for anything else. */
export function parseTopic(topic: string, prefix = DEFAULT_PREFIX): { gw: string; kind: TopicKind } | null {
  if (!topic.startsWith(prefix + '/')) return null;
  const rest = topic.slice(prefix.length + 1).split('/');
  if (rest.length !== 2) return null;
  const [gw, kind] = rest as [string, string];
  if (!gatewayIdSchema.safeParse(gw).success) return null;
  if (kind !== 'counts' && kind !== 'status' && kind !== 'cmd' && kind !== 'ack') return null;
  return { gw, kind };
}

export type Decoded<T> = { ok: true; value: T } | { ok: false; reason: string };

/** What decodePayload needs of a schema: zod 3's and zod 4's `safeParse` both fit. */
interface PayloadSchema<T> {
  safeParse(data: unknown): { success: true; data: T } | { success: false; error: { issues: readonly { path: readonly PropertyKey[]; message: string }[] } };
}

/** Fatal on malformed UTF-8; with `stream` off, each decode starts afresh, so one serves every call. */
const utf8 = new TextDecoder('utf-8', { fatal: true });

/** Decodes an MQTT payload: size, UTF-8, JSON object, then the schema. Never throws. */
export function decodePayload<T>(payload: Uint8Array, schema: PayloadSchema<T>): Decoded<T> {
  if (payload.byteLength > MAX_PAYLOAD_BYTES) return { ok: false, reason: `payload ${payload.byteLength} bytes exceeds 256 KiB` };
  let text: string;
  try {
    text = utf8.decode(payload);
  } catch {
    return { ok: false, reason: 'payload is not valid UTF-8' };
  }
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch {
    return { ok: false, reason: 'payload is not valid JSON' };
  }
  if (typeof json !== 'object' || json === null || Array.isArray(json)) return { ok: false, reason: 'payload is not a JSON object' };
  const parsed = schema.safeParse(json);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    const where = issue?.path.length ? issue.path.map(String).join('.') + ': ' : '';
    // The path may hold the payload's own keys: a NUL there is written out, since the reason is stored.
    return { ok: false, reason: `${where}${issue?.message ?? 'invalid'}`.replaceAll('\0', '\\u0000').slice(0, 300) };
  }
  return { ok: true, value: parsed.data };
}

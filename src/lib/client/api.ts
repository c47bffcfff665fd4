// The islands' side of the HTTP API: typed fetches whose answers are checked with zod, and errors
// turned into one readable message (the server's `{ error }` when it sent one).
import { z } from 'zod';
import { benchFiguresSchema, type BenchFigures } from '../bench-figures-schema.ts';
import { alarmEventViewSchema } from '../alarm-messages.ts';
import { stabilitySchema, type Stability } from '../stability.ts';
import { noteViewSchema, runViewSchema, type AddNoteBody, type NoteView, type RunView } from '../runs.ts';
import type { CommandBody } from '../contract/wire.ts';
import { presenceMessageSchema } from '../live-messages.ts';
import type { OverviewBench } from '../overview.ts';
import type { GatewayPresence } from './gateway-presence.ts';

export class ApiError extends Error {
  constructor(
    readonly status: number,
    message: string,
  ) {
    super(message);
  }
}

async function call<T>(path: string, schema: z.ZodType<T, z.ZodTypeDef, unknown>, init?: RequestInit, signal?: AbortSignal): Promise<T> {
  let res: Response;
  try {
    res = await fetch(path, { ...init, signal: signal ?? null, headers: { accept: 'application/json', ...(init?.body ? { 'content-type': 'application/json' } : {}) } });
  } catch (err) {
    if (err instanceof DOMException && err.name === 'AbortError') throw err;
    throw new ApiError(0, 'the server cannot be reached');
  }
  const text = await res.text();
  let body: unknown = null;
  try {
    body = text ? JSON.parse(text) : null;
  } catch {
    // Not JSON (a proxy's error page): reported by status below.
  }
  if (!res.ok) {
    const msg = body && typeof body === 'object' && 'error' in body && typeof body.error === 'string' ? body.error : `HTTP ${res.status}`;
    throw new ApiError(res.status, msg);
  }
  const parsed = schema.safeParse(body);
  if (!parsed.success) throw new ApiError(res.status, `unexpected answer from ${path.split('?')[0]}`);
  return parsed.data;
}

/** Counts as the contract serves them: sums per `step` ms from `t0`, keyed "<gateway>/<key>". */
export const countsAnswerSchema = z.object({
  t0: z.number(),
  step: z.number().positive(),
  channels: z.record(z.string(), z.array(z.number().nullable())),
  /** Per gateway, ms of each bucket its stored bins cover: what a channel's sum is a rate over. */
  coveredMs: z.record(z.string(), z.array(z.number().nonnegative())),
  x: z.array(z.number().nullable()).optional(),
  cc: z.array(z.number().nullable()).optional(),
});
export type CountsAnswer = z.infer<typeof countsAnswerSchema>;

/** Ms of each bucket recorded by the gateway of `channel` ("<gateway>/<key>"); empty when the answer says nothing of it. */
export function coveredFor(coveredMs: CountsAnswer['coveredMs'] | undefined, channel: string): number[] {
  const gateway = channel.slice(0, channel.indexOf('/'));
  return coveredMs && Object.hasOwn(coveredMs, gateway) ? coveredMs[gateway]! : [];
}

export function fetchCounts(bench: string, from: number, to: number, step: number, signal?: AbortSignal): Promise<CountsAnswer> {
  const q = new URLSearchParams({ from: String(Math.floor(from)), to: String(Math.ceil(to)), step: String(step) });
  return call(`/api/v1/benches/${encodeURIComponent(bench)}/counts?${q}`, countsAnswerSchema, undefined, signal);
}

/**
 * The stored fit (sweeps-store.ts): the model's parameters with amplitudes and darks in counts per
 * raw bin of `dtMs`; the rest of the stored fit is passed through.
 */
/** A dead time as a stored fit keeps it: τ over one bin of the fit's `dtMs`, and the model. */
const deadTimeTerm = z.object({ tauOver: z.number().nonnegative(), model: z.enum(['non-paralyzable', 'paralyzable']) });

export const sweepFitSchema = z
  .object({
    amplitudeA: z.number(),
    amplitudeB: z.number(),
    visibility: z.number(),
    period: z.number(),
    phase: z.number(),
    quadratic: z.number(),
    darkPerBin: z.object({ a: z.number(), b: z.number() }).nullable(),
    /** Absent in fits stored before dead time entered the model. */
    deadTimePerBin: z
      .object({ a: deadTimeTerm.nullable(), b: deadTimeTerm.nullable() })
      .optional(),
    shown: z.enum(['raw', 'net']),
    dtMs: z.number().positive(),
    xMin: z.number().optional(),
    xMax: z.number().optional(),
    /** Mirror travel per volt over the pass, nm/V; null when the bench's optics are unknown (older fits lack it). */
    piezoNmPerV: z.object({ value: z.number(), err: z.number() }).nullable().optional(),
    quality: z
      .object({ pValue: z.number(), deviance: z.number().optional(), dof: z.number().optional(), expectedDeviance: z.number().optional(), errorScale: z.number().optional() })
      .passthrough()
      .optional(),
  })
  .passthrough();
export type SweepFit = z.infer<typeof sweepFitSchema>;

/** A fitted sweep from the sweeps endpoint or a 'sweep' message; `start`/`startMs` both accepted. */
export const sweepSchema = z.preprocess(
  (v) => {
    if (!v || typeof v !== 'object') return v;
    const o = v as Record<string, unknown>;
    return { ...o, start: o['start'] ?? o['startMs'], end: o['end'] ?? o['endMs'] };
  },
  z.object({
    id: z.number().optional(),
    start: z.number(),
    end: z.number(),
    direction: z.enum(['up', 'down']),
    visibility: z.number(),
    visibilityErr: z.number(),
    visibilityNet: z.number().nullable().optional(),
    visibilityNetErr: z.number().nullable().optional(),
    phase: z.number(),
    periodX: z.number(),
    counts: z.number(),
    fit: z.unknown().optional(),
  }),
);
export type Sweep = z.infer<typeof sweepSchema>;

/** A 'sweeps-replaced' message: a late span was refitted, and these stored sweeps gave way to the 'sweep' messages that follow. */
export const sweepsReplacedSchema = z.object({ ids: z.array(z.number()) });

/** The drawable fit of a sweep, or null when the stored fit lacks what the model needs. */
export function sweepFit(s: Sweep): SweepFit | null {
  const p = sweepFitSchema.safeParse(s.fit);
  return p.success ? p.data : null;
}

/** `live`: only the bench's own gateways' passes, none of an imported recording's. */
export function fetchSweeps(bench: string, from: number, to: number, signal?: AbortSignal, source: 'all' | 'live' = 'all'): Promise<Sweep[]> {
  const q = new URLSearchParams({ from: String(Math.floor(from)), to: String(Math.ceil(to)), source });
  return call(`/api/v1/benches/${encodeURIComponent(bench)}/sweeps?${q}`, z.array(sweepSchema), undefined, signal);
}

export function fetchStability(bench: string, from: number, to: number, step: number, signal?: AbortSignal): Promise<Stability> {
  const q = new URLSearchParams({ from: String(Math.floor(from)), to: String(Math.ceil(to)), step: String(step) });
  return call(`/api/v1/benches/${encodeURIComponent(bench)}/stability?${q}`, stabilitySchema, undefined, signal);
}

const overviewAnswerSchema = z.object({
  benches: z.array(z.object({ id: z.string(), counts: countsAnswerSchema, openAlarms: z.array(alarmEventViewSchema) })),
});
export type OverviewAnswer = z.infer<typeof overviewAnswerSchema>;

/** Counts (step a multiple of 1 s) and open alarms of every bench the user may read, in one request. */
export function fetchOverview(from: number, to: number, step: number, signal?: AbortSignal): Promise<OverviewAnswer> {
  const q = new URLSearchParams({ from: String(Math.floor(from)), to: String(Math.ceil(to)), step: String(step) });
  return call(`/api/v1/overview?${q}`, overviewAnswerSchema, undefined, signal);
}

const overviewBenchSchema: z.ZodType<OverviewBench, z.ZodTypeDef, unknown> = z.object({
  id: z.string(),
  name: z.string(),
  wavelengthNm: z.number(),
  description: z.string(),
  // silentSince left out, not undefined, where the gateway is not silent (exact optional properties).
  gateways: presenceMessageSchema.shape.gateways.transform((gs) => gs.map(({ id, online, silentSince }): GatewayPresence => (silentSince === undefined ? { id, online } : { id, online, silentSince }))),
  gatewaysEverSeen: z.number().int().min(0),
  openAlarms: z.number().int().min(0),
  criticalAlarms: z.number().int().min(0),
  activeRun: runViewSchema.nullable(),
  figures: benchFiguresSchema.nullable(),
});

/** These benches as the lab overview's render lists them (those the user may read). */
export async function fetchOverviewBenches(ids: readonly string[], signal?: AbortSignal): Promise<OverviewBench[]> {
  const q = new URLSearchParams(ids.map((id) => ['bench', id]));
  return (await call(`/api/v1/overview/benches?${q}`, z.object({ benches: z.array(overviewBenchSchema) }), undefined, signal)).benches;
}

export async function fetchFigures(bench: string, signal?: AbortSignal): Promise<BenchFigures | null> {
  const answer = await call(`/api/v1/benches/${encodeURIComponent(bench)}/figures`, z.object({ figures: benchFiguresSchema.nullable() }), undefined, signal);
  return answer.figures;
}

/** Whether a gateway is online now (its retained status, and not revoked), from its health answer. */
/** Whether a gateway is online, and since when it has been silent (null when it is not), from its health. */
export function fetchGatewayPresence(gateway: string, signal?: AbortSignal): Promise<{ online: boolean; silentSince: number | null }> {
  return call(`/api/v1/gateways/${encodeURIComponent(gateway)}/health`, z.object({ online: z.boolean(), silentSince: z.number().nullable() }), undefined, signal);
}

export function sendCommand(bench: string, cmd: CommandBody): Promise<{ id: string; gateway: string; gatewayOnline: boolean }> {
  return call(`/api/v1/benches/${encodeURIComponent(bench)}/commands`, z.object({ id: z.string(), gateway: z.string(), gatewayOnline: z.boolean() }), { method: 'POST', body: JSON.stringify(cmd) });
}

export function fetchRuns(bench: string, signal?: AbortSignal): Promise<RunView[]> {
  return call(`/api/v1/benches/${encodeURIComponent(bench)}/runs`, z.array(runViewSchema), undefined, signal);
}

export function startRun(bench: string, title: string): Promise<RunView> {
  return call(`/api/v1/benches/${encodeURIComponent(bench)}/runs`, runViewSchema, { method: 'POST', body: JSON.stringify({ title }) });
}

export function stopRun(id: number): Promise<RunView> {
  return call(`/api/v1/runs/${id}/stop`, runViewSchema, { method: 'POST' });
}

export function setRunKeep(id: number, keep: boolean): Promise<RunView> {
  return call(`/api/v1/runs/${id}/keep`, runViewSchema, { method: 'POST', body: JSON.stringify({ keep }) });
}

export function fetchNotes(runId: number, signal?: AbortSignal): Promise<NoteView[]> {
  return call(`/api/v1/runs/${runId}/notes`, z.array(noteViewSchema), undefined, signal);
}

export function addNote(runId: number, body: AddNoteBody): Promise<NoteView> {
  return call(`/api/v1/runs/${runId}/notes`, noteViewSchema, { method: 'POST', body: JSON.stringify(body) });
}

export function errorText(err: unknown): string {
  return err instanceof Error ? err.message : String(err);
}

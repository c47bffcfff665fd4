// Runs and notes as the API returns them, and the request bodies it accepts. Pure (zod only), so
// the islands share the exact shapes the server validates.
import { z } from 'zod';
import { recordIdSchema } from './record-id.ts';
import { benchFiguresSchema, type BenchFigures } from './bench-figures-schema.ts';

/** A run id in a URL path. */
export const runIdSchema = recordIdSchema;

export const startRunSchema = z.object({
  title: z.string().trim().min(1, 'a run needs a title').max(200, 'title: at most 200 characters'),
});
export type StartRunBody = z.infer<typeof startRunSchema>;

export const addNoteSchema = z.object({
  body: z.string().trim().min(1, 'a note needs text').max(10_000, 'note: at most 10,000 characters'),
  /** The live figures on the author's screen when the note was taken (what they saw). */
  snapshot: benchFiguresSchema.nullable().optional(),
});
export type AddNoteBody = z.infer<typeof addNoteSchema>;

export interface RunView {
  id: number;
  benchId: string;
  title: string;
  /** ms since the epoch */
  startMs: number;
  /** null while the run is active */
  endMs: number | null;
  startedBy: { id: string; name: string } | null;
  noteCount: number;
  /** Spared by retention: its bins and sums stay however old. */
  keep: boolean;
  /** A recording brought in from a file: `startedBy` is who imported it, not who ran the bench then. */
  imported: boolean;
}

export interface NoteView {
  id: number;
  runId: number;
  atMs: number;
  body: string;
  author: { id: string; name: string } | null;
  snapshot: BenchFigures | null;
}

export const runViewSchema: z.ZodType<RunView> = z.object({
  id: z.number(),
  benchId: z.string(),
  title: z.string(),
  startMs: z.number(),
  endMs: z.number().nullable(),
  startedBy: z.object({ id: z.string(), name: z.string() }).nullable(),
  noteCount: z.number(),
  keep: z.boolean(),
  imported: z.boolean(),
});

export const keepRunSchema = z.object({ keep: z.boolean() }).strict();

export const noteViewSchema: z.ZodType<NoteView> = z.object({
  id: z.number(),
  runId: z.number(),
  atMs: z.number(),
  body: z.string(),
  author: z.object({ id: z.string(), name: z.string() }).nullable(),
  snapshot: benchFiguresSchema.nullable(),
});

/**
 * `{ type: 'run', bench, run }` on /api/v1/live when a run starts or stops, and `{ type: 'note',
 * bench, note }` when a note is added: everyone on the bench page follows the operator's record.
 */
export const runMessageSchema = z.object({ type: z.literal('run'), bench: z.string(), run: runViewSchema });
export const noteMessageSchema = z.object({ type: z.literal('note'), bench: z.string(), note: noteViewSchema });

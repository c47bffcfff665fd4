// Rows of the server's CSV export (contract: `#` comment lines, a header
// `t_ms,<gateway>/<key>,…[,x][,cc]`, one row per bin) turned back into bins for `--driver replay`.
// Pure: the records come from csv-parse; the bin width is the spacing of the first two rows.
import { z } from 'zod';
import { MAX_COUNT, channelKeySchema, gatewayIdSchema } from '../../src/lib/contract/wire.ts';

export interface ReplayColumns {
  /** The gateway whose channels are replayed. */
  source: string;
  keys: string[];
  /** Column index of each key's counts. */
  at: number[];
  xAt: number | null;
  ccAt: number | null;
}

export interface ReplayBin {
  /** Bin start as recorded, ms since the epoch. */
  t: number;
  counts: number[];
  x?: number;
  cc?: number;
}

export type ReplayRow = { kind: 'bins'; bins: ReplayBin[] } | { kind: 'error'; reason: string };

const channelColumn = z.string().transform((s, ctx) => {
  const [gw, key, ...rest] = s.split('/');
  if (rest.length || !gatewayIdSchema.safeParse(gw).success || !channelKeySchema.safeParse(key).success) {
    ctx.addIssue({ code: z.ZodIssueCode.custom, message: `column "${s.slice(0, 60)}" is not <gateway>/<key>, x or cc` });
    return z.NEVER;
  }
  return { gw: gw!, key: key! };
});
const timeCell = z.string().regex(/^\d{1,16}$/, 't_ms must be whole ms').transform(Number);
const countCell = z.string().regex(/^\d{1,10}$/, 'counts must be whole numbers ≥ 0').transform(Number).pipe(z.number().max(MAX_COUNT));
const xCell = z
  .string()
  .regex(/^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$/, 'x must be a decimal number')
  .transform(Number)
  .pipe(z.number().finite('x must be finite'));

/** Reads the header row; `source` picks one gateway when the file holds several. */
export function replayColumns(header: string[], source?: string): ReplayColumns {
  if (header[0]?.trim() !== 't_ms') throw new Error('the first column must be t_ms');
  const columns = new Map<string, { key: string; at: number }[]>();
  let xAt: number | null = null;
  let ccAt: number | null = null;
  header.forEach((raw, i) => {
    const name = raw.trim();
    if (i === 0) return;
    if (name === 'x') xAt = i;
    else if (name === 'cc') ccAt = i;
    else {
      const col = channelColumn.parse(name);
      columns.set(col.gw, [...(columns.get(col.gw) ?? []), { key: col.key, at: i }]);
    }
  });
  const gateways = [...columns.keys()];
  const chosen = source ?? (gateways.length === 1 ? gateways[0] : undefined);
  if (!chosen) throw new Error(`the file holds channels of ${gateways.length ? gateways.join(', ') : 'no gateway'}: pick one with --source`);
  const cols = columns.get(chosen);
  if (!cols) throw new Error(`the file has no channels of ${chosen} (it has ${gateways.join(', ')})`);
  return { source: chosen, keys: cols.map((c) => c.key), at: cols.map((c) => c.at), xAt, ccAt };
}

/**
 * Turns rows into bins. The bin width is the spacing of the first two rows (or `dt` when given);
 * a row whose time is off that grid, or goes backwards, is reported and skipped. A row with an
 * empty count cell has no data for that bin: it is skipped silently and leaves a gap.
 */
export class ReplayParser {
  /** Time of the first row, the origin of the grid, ms. */
  private origin: number | null = null;
  /** The first row, waiting for the second to fix the bin width. */
  private held: ReplayBin | null = null;
  private last = -Infinity;
  private width: number | null;

  constructor(
    private readonly cols: ReplayColumns,
    dt?: number,
  ) {
    this.width = dt ?? null;
  }

  /** Bin width, ms; known after two rows or when given. */
  get dt(): number | null {
    return this.width;
  }

  row(record: string[]): ReplayRow {
    const parsed = this.cells(record);
    if (parsed === null || 'reason' in parsed) return parsed === null ? { kind: 'bins', bins: [] } : { kind: 'error', reason: parsed.reason };
    const bin = parsed;
    if (bin.t <= this.last) return { kind: 'error', reason: `t_ms ${bin.t} does not come after ${this.last}` };
    this.origin ??= bin.t;
    const out: ReplayBin[] = [];
    if (this.width === null) {
      if (!this.held) {
        this.held = bin;
        this.last = bin.t;
        return { kind: 'bins', bins: [] };
      }
      this.width = bin.t - this.held.t;
      out.push(this.held);
      this.held = null;
    }
    if ((bin.t - this.origin) % this.width !== 0) return { kind: 'error', reason: `t_ms ${bin.t} is off the ${this.width} ms grid` };
    this.last = bin.t;
    out.push(bin);
    return { kind: 'bins', bins: out };
  }

  /** The file ended: only a lone first row can still be waiting. */
  end(): ReplayRow {
    return this.held ? { kind: 'error', reason: 'a single row cannot fix the bin width: pass --dt' } : { kind: 'bins', bins: [] };
  }

  /** The row's cells as a bin; null when a count cell is empty (no data for that bin). */
  private cells(record: string[]): ReplayBin | { reason: string } | null {
    const t = timeCell.safeParse(record[0]?.trim());
    if (!t.success) return { reason: t.error.issues[0]!.message };
    const counts: number[] = [];
    for (let i = 0; i < this.cols.at.length; i++) {
      const cell = record[this.cols.at[i]!]?.trim() ?? '';
      if (cell === '') return null;
      const c = countCell.safeParse(cell);
      if (!c.success) return { reason: `${this.cols.keys[i]}: ${c.error.issues[0]!.message}` };
      counts.push(c.data);
    }
    const bin: ReplayBin = { t: t.data, counts };
    const xText = this.cols.xAt === null ? '' : (record[this.cols.xAt]?.trim() ?? '');
    if (xText !== '') {
      const x = xCell.safeParse(xText);
      if (!x.success) return { reason: x.error.issues[0]!.message };
      bin.x = x.data;
    }
    const ccText = this.cols.ccAt === null ? '' : (record[this.cols.ccAt]?.trim() ?? '');
    if (ccText !== '') {
      const cc = countCell.safeParse(ccText);
      if (!cc.success) return { reason: `cc: ${cc.error.issues[0]!.message}` };
      bin.cc = cc.data;
    }
    return bin;
  }
}

// The counts CSV of the wire contract, pure: `#` metadata lines (bench, wavelength, channels and
// roles, corrections, units), then `t_ms,<gateway>/<key>,…[,x][,cc]` and one row per bin. Used by
// the export (and any other CSV writer of counts) and read back by the import, so both sides agree.
import type { ChannelCalibration } from './channel-calibration.ts';
export type CsvChannelMeta = ChannelCalibration;

export interface CsvMeta {
  benchId: string;
  benchName: string;
  wavelengthNm: number;
  fromMs: number;
  toMs: number;
  run: { id: number; title: string } | null;
  channels: CsvChannelMeta[];
  hasX: boolean;
  hasCc: boolean;
}

export const CSV_FORMAT_LINE = '# fringewise counts csv v1';

const oneLine = (s: string) => s.replace(/[\r\n]+/g, ' ');

export function channelColumn(c: Pick<CsvChannelMeta, 'gateway' | 'key'>): string {
  return `${c.gateway}/${c.key}`;
}

/** `k=v; k=v` fields of a channel line; values never hold `;` or newlines. */
function channelFields(c: CsvChannelMeta): string {
  const f: [string, string | number | null][] = [
    ['role', c.role],
    ['label', oneLine(c.label).replace(/;/g, ',')],
    ['dark_rate_cps', c.darkRate],
    ['dark_rate_err_cps', c.darkRateErr],
    ['dead_time_ns', c.deadTimeNs],
    ['dead_time_model', c.deadTimeModel],
    ['efficiency', c.efficiency],
  ];
  return f.filter(([, v]) => v !== null).map(([k, v]) => `${k}=${v}`).join('; ');
}

export function metadataLines(meta: CsvMeta): string {
  const lines = [
    CSV_FORMAT_LINE,
    `# bench: ${meta.benchId} (${oneLine(meta.benchName)})`,
    `# wavelength_nm: ${meta.wavelengthNm}`,
    `# from_ms: ${meta.fromMs}`,
    `# to_ms: ${meta.toMs}`,
    ...(meta.run ? [`# run: ${meta.run.id} (${oneLine(meta.run.title)})`] : []),
    ...meta.channels.map((c) => `# channel ${channelColumn(c)}: ${channelFields(c)}`),
    '# units: t_ms = start of the bin, ms since the Unix epoch (UTC); channel columns = raw counts per bin (no corrections applied)',
    ...(meta.hasX ? ['# units: x = scan coordinate at the bin centre (piezo drive, V)'] : []),
    ...(meta.hasCc ? ['# units: cc = coincidences between the two outputs per bin'] : []),
    '# corrections: per channel above — dark rate (counts/s, 1σ), dead time (ns, model) and relative efficiency, as Fringewise applies them in its analysis',
    '# empty cell = no bin of that channel at that time',
  ];
  return lines.join('\n') + '\n';
}

export function columnsOf(meta: Pick<CsvMeta, 'channels' | 'hasX' | 'hasCc'>): string[] {
  return ['t_ms', ...meta.channels.map(channelColumn), ...(meta.hasX ? ['x'] : []), ...(meta.hasCc ? ['cc'] : [])];
}

export interface CsvRow {
  t: number;
  /** One per channel column, null where that channel has no bin. */
  values: (number | null)[];
  x: number | null;
  cc: number | null;
}

/** The row's cells in column order (x and cc only when the file has those columns). */
export function rowCells(row: CsvRow, hasX: boolean, hasCc: boolean): (number | null)[] {
  return [row.t, ...row.values, ...(hasX ? [row.x] : []), ...(hasCc ? [row.cc] : [])];
}

export function rowLine(row: CsvRow, hasX: boolean, hasCc: boolean): string {
  // String(number) round-trips every double exactly (shortest representation), so x survives export → import.
  return rowCells(row, hasX, hasCc)
    .map((v) => (v === null ? '' : String(v)))
    .join(',') + '\n';
}

/** Reads a `# channel <gw>/<key>: k=v; …` line back; null for any other line. */
export function parseChannelLine(line: string): { column: string; fields: Record<string, string> } | null {
  const m = /^#\s*channel\s+([^:\s]+):\s*(.*)$/.exec(line.trim());
  if (!m) return null;
  const pairs: [string, string][] = [];
  for (const part of m[2]!.split(';')) {
    const eq = part.indexOf('=');
    if (eq > 0) pairs.push([part.slice(0, eq).trim(), part.slice(eq + 1).trim()]);
  }
  // The names come from an uploaded file: own properties only, so "__proto__=…" is just a field.
  return { column: m[1]!, fields: Object.fromEntries(pairs) };
}

// What the import routes answer, shared by the server and the upload island. Pure.

/**
 * An imported run's rows are stored under the pseudo-gateway `imp-<runId>` of its bench: no token,
 * so nothing connects as it. The prefix is reserved; such gateways drive nothing and get no default roles.
 */
export const IMPORT_GATEWAY_PREFIX = 'imp-';

export const isImportGateway = (gatewayId: string): boolean => gatewayId.startsWith(IMPORT_GATEWAY_PREFIX);

/** The pseudo-gateway of a run; only an imported run has one. */
export const importGatewayOf = (runId: number): string => `${IMPORT_GATEWAY_PREFIX}${runId}`;

/** The imported run a pseudo-gateway stores; null for any other gateway. */
export function importRunOf(gatewayId: string): number | null {
  const id = gatewayId.slice(IMPORT_GATEWAY_PREFIX.length);
  return isImportGateway(gatewayId) && /^\d{1,15}$/.test(id) ? Number(id) : null;
}

/**
 * A channel's name where series of several recordings are drawn together (the history): an
 * imported run's channels take the same labels as the live ones ("Output A"), so they name their run.
 */
export function seriesLabel(c: { gateway: string; label: string }): string {
  const run = importRunOf(c.gateway);
  return run === null ? c.label : `${c.label} (imported run ${run})`;
}

/** 50 MiB: about 2–3 million bins of a two-channel table, an afternoon at 10 ms bins. */
export const MAX_IMPORT_BYTES = 50 * 1024 * 1024;

export interface ImportIssue {
  /** 1-based line of the file. */
  line: number;
  message: string;
}

/** Data the bench already holds inside a file's time, which an import would lay a second series over. */
export interface ImportOverlap {
  /** The file's span, ms: first bin start to last bin end. */
  fileFromMs: number;
  fileToMs: number;
  /** The part of that span the bench holds data in, ms. */
  heldFromMs: number;
  heldToMs: number;
  /** Whose data it is: a live gateway's, or an earlier import (named by its run, never its pseudo-gateway). */
  held: { kind: 'live'; gateway: string } | { kind: 'import'; runId: number; title: string };
  /** The file's `# bench:` line names this bench: it is this bench's own export. */
  sameBench: boolean;
}

/**
 * What the preview and the refused import say, in one wording; `time` formats a time (the upload
 * island passes local time as its preview shows it, the server UTC for scripts).
 */
export function overlapMessage(o: ImportOverlap, time: (ms: number) => string): string {
  const whose = o.held.kind === 'live' ? `live data from gateway ${o.held.gateway}` : `the imported run “${o.held.title}”`;
  const head = `This bench already holds ${whose} from ${time(o.heldFromMs)} to ${time(o.heldToMs)}, inside the file's ${time(o.fileFromMs)} to ${time(o.fileToMs)}.`;
  if (o.sameBench) return `${head} The file is an export of this bench, so its data is already here; nothing needs importing.`;
  return `${head} A bench's time holds one recording: import the file into a bench with no data in that time (an admin can create one for it).`;
}

export interface ImportPreview {
  channels: { column: string; key: string; label: string | null }[];
  hasX: boolean;
  hasCc: boolean;
  dtMs: number | null;
  rows: number;
  fromMs: number | null;
  /** End of the last bin, ms. */
  toMs: number | null;
  firstRows: string[][];
  issues: ImportIssue[];
  /** Set when the bench already holds data in the file's time: the import would be refused. */
  overlap: ImportOverlap | null;
  /** Things to check that do not stop the import (a wavelength other than the bench's). */
  warnings: string[];
  /** Days raw bins are kept outside kept runs: the preview says what releasing the imported run would cost. */
  rawRetentionDays: number;
}

export interface ImportResult {
  runId: number;
  gatewayId: string;
  /** Imported runs are kept from retention's trimming; an operator releases one like any run. */
  keep: boolean;
  bins: number;
  batches: number;
  fromMs: number;
  toMs: number;
  channels: string[];
}

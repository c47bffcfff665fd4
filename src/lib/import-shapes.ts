// What the import routes answer, shared by the server and the upload island. Pure.

/**
 * An imported run's rows are stored under the pseudo-gateway `imp-<runId>` of its bench: no token,
 * so nothing connects as it. The prefix is reserved; such gateways drive nothing and get no default roles.
 */
export const IMPORT_GATEWAY_PREFIX = 'imp-';

export const isImportGateway = (gatewayId: string): boolean => gatewayId.startsWith(IMPORT_GATEWAY_PREFIX);

/** The pseudo-gateway of a run; only an imported run has one. */
export const importGatewayOf = (runId: number): string => `${IMPORT_GATEWAY_PREFIX}${runId}`;

/** 50 MiB: about 2–3 million bins of a two-channel table, an afternoon at 10 ms bins. */
export const MAX_IMPORT_BYTES = 50 * 1024 * 1024;

export interface ImportIssue {
  /** 1-based line of the file. */
  line: number;
  message: string;
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
}

export interface ImportResult {
  runId: number;
  gatewayId: string;
  bins: number;
  batches: number;
  fromMs: number;
  toMs: number;
  channels: string[];
}

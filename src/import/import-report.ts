/**
 * What an import tells its caller. Re-exported by import-file.ts, the module callers use.
 * Row numbers: in CSV the header is row 1 and the first data row is row 2 (as a spreadsheet
 * shows them); in JSON row N is the N-th object of the array (index + 1). Row 0 means the file
 * as a whole (too large, not parseable); `column` is null when no single column is at fault.
 */

export type ImportKind = "results" | "realized";

export interface ImportRequest {
  readonly workspaceId: number;
  /** The API token that runs the import; null for the CLI working directly on the database. */
  readonly tokenId: number | null;
  readonly kind: ImportKind;
  readonly fileName: string | null;
  readonly content: string;
  /** Inferred from the file name's extension, else from the content, when absent. */
  readonly format?: "csv" | "json";
  /** Validate and report exactly as an import would, but write nothing except the log entry. */
  readonly dryRun?: boolean;
}

export interface ImportRowError {
  readonly row: number;
  readonly column: string | null;
  readonly message: string;
}

export interface ImportNote {
  readonly row: number;
  readonly column: string;
  readonly message: string;
}

export interface ImportReport {
  /** The id of the entry in the imports log (every import is logged, also when rejected). */
  readonly importId: number;
  readonly outcome: "applied" | "rejected" | "dry_run";
  /** Data rows read (the header not counted). */
  readonly rows: number;
  /** Per experiment x metric result (or realized measurement): new records. */
  readonly created: number;
  /** Records whose stored input or experiment fields changed. */
  readonly updated: number;
  /** Records already stored exactly as the file gives them. */
  readonly unchanged: number;
  /** Every problem found, all at once; when not empty, nothing was written. */
  readonly errors: readonly ImportRowError[];
  /** Choices made while reading that a person should know about (e.g. a log-scale interval). */
  readonly notes: readonly ImportNote[];
}

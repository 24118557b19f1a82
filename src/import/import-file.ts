/**
 * Imports a file of a company's test history (results) or of realized measurements into a
 * workspace. All or nothing: the file is validated whole, every error is reported at once, and the
 * writes run in one transaction, so one bad row in a thousand writes nothing. A dry run reports the
 * same and writes nothing but its entry in the imports log. Importing the same file again changes
 * nothing (every record counts as unchanged); an edited row updates its record.
 * Layouts: src/import/layouts.ts and templates/*.csv; conversions: statistics.md section 1.
 */
import { createHash } from "node:crypto";
import { eq } from "drizzle-orm";
import type { Database } from "../db/client.ts";
import { imports, metrics } from "../db/schema.ts";
import type { ImportReport, ImportRequest, ImportRowError } from "./import-report.ts";
import { inferFormat, readTable, type Table } from "./read-table.ts";
import { planRealized } from "./realized-plan.ts";
import { planResults, type StoredMetric } from "./results-plan.ts";
import { lookupKeys, storeRealized } from "./store-realized.ts";
import { type Executor, storeResults, type WriteCounts } from "./store-results.ts";

export type { ImportKind, ImportNote, ImportReport, ImportRequest, ImportRowError } from "./import-report.ts";

/** Larger files are refused with a clear error (split them: each import is all or nothing). */
export const importLimits = { maxBytes: 10 * 1024 * 1024, maxRows: 20_000 } as const;

export async function importFile(db: Database, request: ImportRequest): Promise<ImportReport> {
  const contentHash = createHash("sha256").update(request.content, "utf8").digest("hex");
  const dryRun = request.dryRun === true;
  const log = async (
    outcome: ImportReport["outcome"],
    rows: number,
    counts: WriteCounts,
    errors: readonly ImportRowError[],
    executor: Executor = db,
  ) => {
    const [entry] = await executor
      .insert(imports)
      .values({
        workspaceId: request.workspaceId,
        tokenId: request.tokenId,
        kind: request.kind,
        fileName: request.fileName,
        contentHash,
        dryRun,
        rowCount: rows,
        ...counts,
        outcome,
        errors: [...errors],
      })
      .returning({ id: imports.id });
    if (!entry) throw new Error("the imports log did not return the new entry's id");
    return entry.id;
  };
  const none: WriteCounts = { created: 0, updated: 0, unchanged: 0 };
  const reject = async (
    rows: number,
    errors: readonly ImportRowError[],
    notes: ImportReport["notes"] = [],
  ) => ({
    importId: await log("rejected", rows, none, errors),
    outcome: "rejected" as const,
    rows,
    ...none,
    errors,
    notes,
  });

  const bytes = Buffer.byteLength(request.content, "utf8");
  if (bytes > importLimits.maxBytes) {
    return reject(0, [
      {
        row: 0,
        column: null,
        message: `the file is ${formatMegabytes(bytes)}; the limit is ${formatMegabytes(importLimits.maxBytes)}: split it into several files (each import is all or nothing)`,
      },
    ]);
  }
  const format = request.format ?? inferFormat(request.fileName, request.content);
  const read = readTable(request.content, format);
  if (!read.ok) return reject(0, read.errors);
  const table = read.table;
  if (table.rows.length > importLimits.maxRows) {
    return reject(table.rows.length, [
      {
        row: 0,
        column: null,
        message: `the file has ${table.rows.length} rows; the limit is ${importLimits.maxRows}: split it into several files (each import is all or nothing)`,
      },
    ]);
  }
  if (table.rows.length === 0) {
    return reject(0, [{ row: 0, column: null, message: "the file has a header but no data rows" }]);
  }

  const now = new Date().toISOString();
  if (request.kind === "results") {
    const plan = planResults(table, await loadStoredMetrics(db, request.workspaceId));
    if (plan.errors.length > 0) return reject(table.rows.length, plan.errors, plan.notes);
    if (dryRun) {
      const counts = await storeResults(db, request.workspaceId, plan, { write: false, now });
      return finish(
        "dry_run",
        table,
        counts,
        plan.notes,
        await log("dry_run", table.rows.length, counts, []),
      );
    }
    return db.transaction(async (transaction) => {
      const counts = await storeResults(transaction, request.workspaceId, plan, { write: true, now });
      const importId = await log("applied", table.rows.length, counts, [], transaction);
      return finish("applied", table, counts, plan.notes, importId);
    });
  }

  const keysOf = (column: string) =>
    table.rows.map((row) => row.cells[column]?.trim()).filter((key): key is string => key !== undefined);
  const lookup = await lookupKeys(db, request.workspaceId, keysOf("experiment"), keysOf("metric"));
  const plan = planRealized(table, new Set(lookup.experimentIds.keys()), lookup.metricDirections);
  if (plan.errors.length > 0) return reject(table.rows.length, plan.errors);
  if (dryRun) {
    const counts = await storeRealized(db, lookup, plan, { write: false, now });
    return finish("dry_run", table, counts, [], await log("dry_run", table.rows.length, counts, []));
  }
  return db.transaction(async (transaction) => {
    const counts = await storeRealized(transaction, lookup, plan, { write: true, now });
    const importId = await log("applied", table.rows.length, counts, [], transaction);
    return finish("applied", table, counts, [], importId);
  });
}

function finish(
  outcome: "applied" | "dry_run",
  table: Table,
  counts: WriteCounts,
  notes: ImportReport["notes"],
  importId: number,
): ImportReport {
  return { importId, outcome, rows: table.rows.length, ...counts, errors: [], notes };
}

async function loadStoredMetrics(db: Database, workspaceId: number): Promise<Map<string, StoredMetric>> {
  const rows = await db
    .select({ key: metrics.key, kind: metrics.kind, direction: metrics.direction })
    .from(metrics)
    .where(eq(metrics.workspaceId, workspaceId));
  return new Map(rows.map((row) => [row.key, row]));
}

function formatMegabytes(bytes: number): string {
  return `${(bytes / (1024 * 1024)).toFixed(1)} MB`;
}

/**
 * Reads an imported file (CSV or JSON) into a header and rows of raw text cells, keeping each
 * row's number as the person sees it: CSV header row 1, first data row 2; JSON object N is row N.
 */
import { parse } from "csv-parse/sync";
import type { ImportRowError } from "./import-report.ts";

export interface TableRow {
  readonly row: number;
  /** Column name -> the cell's text exactly as written (empty cells left out). */
  readonly cells: Readonly<Record<string, string>>;
}

export interface Table {
  readonly format: "csv" | "json";
  readonly columns: readonly string[];
  readonly rows: readonly TableRow[];
}

export type TableResult =
  | { readonly ok: true; readonly table: Table }
  | { readonly ok: false; readonly errors: readonly ImportRowError[] };

/** The format named by the file's extension, else guessed from the first character of the content. */
export function inferFormat(fileName: string | null, content: string): "csv" | "json" {
  const extension = fileName?.toLowerCase().match(/\.([a-z]+)$/)?.[1];
  if (extension === "json") return "json";
  if (extension === "csv" || extension === "txt") return "csv";
  return /^\s*\[/.test(content) ? "json" : "csv";
}

/** Header names are matched without case and surrounding spaces; inner spaces become underscores. */
export function normaliseColumnName(name: string): string {
  return name.trim().toLowerCase().replace(/\s+/g, "_");
}

export function readTable(content: string, format: "csv" | "json"): TableResult {
  return format === "json" ? readJson(content) : readCsv(content);
}

function readCsv(content: string): TableResult {
  const text = content.replace(/^\uFEFF/, "");
  const firstLine = text.split(/\r?\n/, 1)[0] ?? "";
  // Spreadsheets in many locales save with semicolons; the header tells which was used.
  const delimiter = !firstLine.includes(",") && firstLine.includes(";") ? ";" : ",";
  let records: string[][];
  try {
    records = parse(text, { delimiter, relax_column_count: true, skip_empty_lines: false });
  } catch (error) {
    const lines = (error as { lines?: number }).lines;
    const reason = error instanceof Error ? error.message.replace(/^[^:]*:\s*/, "") : String(error);
    return {
      ok: false,
      errors: [{ row: lines ?? 0, column: null, message: `the file is not valid CSV: ${reason}` }],
    };
  }
  const [header, ...body] = records;
  if (!header || header.every((cell) => cell.trim() === "")) {
    return {
      ok: false,
      errors: [{ row: 1, column: null, message: "the file is empty: it needs a header row" }],
    };
  }
  const headerCheck = checkHeader(header.map(normaliseColumnName));
  if (!headerCheck.ok) return headerCheck;
  const columns = headerCheck.columns;
  const rows: TableRow[] = [];
  const errors: ImportRowError[] = [];
  body.forEach((record, index) => {
    const row = index + 2;
    if (record.every((cell) => cell.trim() === "")) return;
    if (record.length > columns.length) {
      errors.push({
        row,
        column: null,
        message: `the row has ${record.length} cells but the header names ${columns.length} columns`,
      });
      return;
    }
    const cells: Record<string, string> = {};
    record.forEach((cell, position) => {
      const column = columns[position];
      if (column !== undefined && cell.trim() !== "") cells[column] = cell;
    });
    rows.push({ row, cells });
  });
  if (errors.length > 0) return { ok: false, errors };
  return { ok: true, table: { format: "csv", columns, rows } };
}

function readJson(content: string): TableResult {
  let parsed: unknown;
  try {
    parsed = JSON.parse(content.replace(/^\uFEFF/, ""));
  } catch (error) {
    const reason = error instanceof Error ? error.message : String(error);
    return {
      ok: false,
      errors: [{ row: 0, column: null, message: `the file is not valid JSON: ${reason}` }],
    };
  }
  if (!Array.isArray(parsed)) {
    return {
      ok: false,
      errors: [{ row: 0, column: null, message: "a JSON import must be an array of objects, one per row" }],
    };
  }
  const errors: ImportRowError[] = [];
  const rows: TableRow[] = [];
  const columnSet = new Set<string>();
  parsed.forEach((item: unknown, index) => {
    const row = index + 1;
    if (item === null || typeof item !== "object" || Array.isArray(item)) {
      errors.push({
        row,
        column: null,
        message: "each element of the array must be an object of column: value",
      });
      return;
    }
    const cells: Record<string, string> = {};
    for (const [key, value] of Object.entries(item as Record<string, unknown>)) {
      const column = normaliseColumnName(key);
      columnSet.add(column);
      if (value === null || value === undefined) continue;
      if (typeof value === "number" || typeof value === "boolean") cells[column] = String(value);
      else if (typeof value === "string") {
        if (value.trim() !== "") cells[column] = value;
      } else {
        errors.push({ row, column, message: "must be a number, a string, true/false or null" });
      }
    }
    rows.push({ row, cells });
  });
  const headerCheck = checkHeader([...columnSet]);
  if (!headerCheck.ok) errors.push(...headerCheck.errors);
  if (errors.length > 0) return { ok: false, errors };
  return { ok: true, table: { format: "json", columns: [...columnSet], rows } };
}

function checkHeader(
  columns: string[],
): { ok: true; columns: string[] } | { ok: false; errors: ImportRowError[] } {
  const errors: ImportRowError[] = [];
  const seen = new Set<string>();
  columns.forEach((column, position) => {
    if (column === "") {
      errors.push({
        row: 1,
        column: null,
        message: `header cell ${position + 1} is empty: every column needs a name`,
      });
    } else if (seen.has(column)) {
      errors.push({ row: 1, column, message: `the column "${column}" appears twice in the header` });
    }
    seen.add(column);
  });
  return errors.length > 0 ? { ok: false, errors } : { ok: true, columns };
}

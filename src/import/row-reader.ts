/**
 * Typed access to the cells of one imported row. Each cell is parsed once; a cell that does not
 * parse records one error (row, column, message) and then reads as "not given", so later checks
 * do not pile further errors on the same mistake.
 */
import {
  type CellResult,
  type DecimalValue,
  parseBoolean,
  parseChoice,
  parseCount,
  parseDate,
  parseDecimal,
  parsePlannedSplit,
} from "./cell-parsers.ts";
import type { ImportRowError } from "./import-report.ts";
import type { TableRow } from "./read-table.ts";

export class RowReader {
  readonly row: number;
  private readonly cells: Readonly<Record<string, string>>;
  private readonly errors: ImportRowError[];
  private readonly parsed = new Map<string, unknown>();
  private readonly failedColumns = new Set<string>();
  private errorsOfRow = 0;

  constructor(tableRow: TableRow, errors: ImportRowError[]) {
    this.row = tableRow.row;
    this.cells = tableRow.cells;
    this.errors = errors;
  }

  /** The cells as written (column -> raw text), for storing the input exactly as given. */
  get input(): Record<string, string> {
    return { ...this.cells };
  }

  /** Whether the cell holds something (it may still fail to parse). */
  has(column: string): boolean {
    return this.cells[column] !== undefined;
  }

  /** Whether the cell holds something that parsed. */
  valid(column: string): boolean {
    return this.has(column) && !this.failedColumns.has(column);
  }

  fail(column: string | null, message: string): void {
    if (column !== null) {
      if (this.failedColumns.has(column)) return;
      this.failedColumns.add(column);
    }
    this.errors.push({ row: this.row, column, message });
    this.errorsOfRow += 1;
  }

  /** How many errors this row has recorded so far. */
  get errorCount(): number {
    return this.errorsOfRow;
  }

  text(column: string): string | undefined {
    const raw = this.cells[column];
    return raw === undefined ? undefined : raw.trim();
  }

  decimal(column: string): DecimalValue | undefined {
    return this.read(column, parseDecimal);
  }

  count(column: string): number | undefined {
    return this.read(column, parseCount);
  }

  boolean(column: string): boolean | undefined {
    return this.read(column, parseBoolean);
  }

  date(column: string): string | undefined {
    return this.read(column, parseDate);
  }

  split(column: string): number[] | undefined {
    return this.read(column, parsePlannedSplit);
  }

  choice<Choice extends string>(column: string, choices: readonly Choice[]): Choice | undefined {
    return this.read(column, (text) => parseChoice(text, choices));
  }

  private read<Value>(column: string, parser: (text: string) => CellResult<Value>): Value | undefined {
    const raw = this.cells[column];
    if (raw === undefined || this.failedColumns.has(column)) return undefined;
    if (this.parsed.has(column)) return this.parsed.get(column) as Value;
    const result = parser(raw);
    if (!result.ok) {
      this.fail(column, result.message);
      return undefined;
    }
    this.parsed.set(column, result.value);
    return result.value;
  }
}

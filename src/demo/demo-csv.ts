/**
 * Writes rows as CSV (RFC 4180): a header line, then one line per row in the given column order;
 * a cell with a comma, quote or line break is quoted, quotes doubled. Missing cells are empty.
 */
export function formatCsv(
  columns: readonly string[],
  rows: readonly Readonly<Record<string, string>>[],
): string {
  const lines = [columns.map(quoteCell).join(",")];
  for (const row of rows) lines.push(columns.map((column) => quoteCell(row[column] ?? "")).join(","));
  return `${lines.join("\n")}\n`;
}

function quoteCell(text: string): string {
  return /[",\r\n]/.test(text) ? `"${text.replaceAll('"', '""')}"` : text;
}

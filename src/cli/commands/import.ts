/**
 * `plumbline import FILE --workspace NAME [--dry-run] [--realized] [--json]`: imports a history of
 * test results (or, with --realized, realized measurements) from a CSV or JSON file, all or
 * nothing. Works directly on the database named by PLUMBLINE_DATABASE_URL.
 */
import { readFile, stat } from "node:fs/promises";
import { basename } from "node:path";
import { parseArgs } from "node:util";
import { eq } from "drizzle-orm";
import { workspaces } from "../../db/schema.ts";
import { type ImportReport, importFile, importLimits } from "../../import/import-file.ts";
import type { CommandIo } from "../io.ts";
import { withDatabase } from "./workspace.ts";

export const summary =
  "import a CSV or JSON file of test results (or --realized measurements), all or nothing";

const help = `Usage:
  plumbline import FILE --workspace NAME [--dry-run] [--realized] [--json]

Reads FILE (CSV with a header row, or JSON: an array of objects) in the canonical layout
(templates/history-template.csv; with --realized, templates/realized-template.csv) and stores it
in the workspace. One bad row writes nothing: every error is listed with its row and column
(CSV: the header is row 1, the first data row is row 2; JSON: object N is row N).
Importing the same file again changes nothing.

  --workspace NAME  the workspace to import into (required)
  --dry-run         check and report exactly as an import would, write nothing
  --realized        the file holds realized measurements (holdouts, re-tests, post-launch reads)
  --json            print the report as one JSON document:
                    {"importId","outcome","rows","created","updated","unchanged","errors":[{"row","column","message"}],"notes"}

Exits 1 when the import is rejected.`;

export async function run(args: string[], io: CommandIo): Promise<number> {
  let parsed: {
    values: { workspace?: string; "dry-run"?: boolean; realized?: boolean; json?: boolean; help?: boolean };
    positionals: string[];
  };
  try {
    parsed = parseArgs({
      args,
      strict: true,
      allowPositionals: true,
      options: {
        workspace: { type: "string" },
        "dry-run": { type: "boolean" },
        realized: { type: "boolean" },
        json: { type: "boolean" },
        help: { type: "boolean", short: "h" },
      },
    });
  } catch (error) {
    io.err(`plumbline import: ${(error as Error).message}\n\n${help}`);
    return 2;
  }
  const { values, positionals } = parsed;
  if (values.help) {
    io.out(help);
    return 0;
  }
  if (positionals.length !== 1) {
    io.err(`plumbline import: give exactly one FILE\n\n${help}`);
    return 2;
  }
  if (!values.workspace) {
    io.err(`plumbline import: --workspace NAME is required\n\n${help}`);
    return 2;
  }
  const path = positionals[0] as string;
  let content: string;
  try {
    const size = (await stat(path)).size;
    if (size > importLimits.maxBytes) {
      io.err(
        `plumbline import: ${path} is ${(size / 1048576).toFixed(1)} MB; the limit is ${(importLimits.maxBytes / 1048576).toFixed(1)} MB: split it into several files (each import is all or nothing)`,
      );
      return 1;
    }
    content = await readFile(path, "utf8");
  } catch (error) {
    io.err(
      `plumbline import: cannot read ${path}: ${(error as NodeJS.ErrnoException).code ?? (error as Error).message}`,
    );
    return 1;
  }
  const workspaceName = values.workspace;
  return withDatabase(
    io,
    async (db) => {
      const [workspace] = await db.select().from(workspaces).where(eq(workspaces.name, workspaceName));
      if (!workspace) {
        io.err(`plumbline import: no workspace named "${workspaceName}" (see plumbline workspace list)`);
        return 1;
      }
      const report = await importFile(db, {
        workspaceId: workspace.id,
        tokenId: null,
        kind: values.realized ? "realized" : "results",
        fileName: basename(path),
        content,
        dryRun: values["dry-run"] === true,
      });
      if (values.json) io.out(JSON.stringify(report));
      else io.out(describeReport(report, basename(path), workspaceName));
      return report.outcome === "rejected" ? 1 : 0;
    },
    "plumbline import",
  );
}

/** The report for a person: counts, then each error as "row 7, column lift_se: ...", then notes. */
export function describeReport(report: ImportReport, fileName: string, workspaceName: string): string {
  const where = (row: number, column: string | null) =>
    row === 0 ? "file" : column === null ? `row ${row}` : `row ${row}, column ${column}`;
  const counts = `${report.created} created, ${report.updated} updated, ${report.unchanged} unchanged`;
  const lines: string[] = [];
  if (report.outcome === "rejected") {
    lines.push(
      `Rejected ${fileName}: nothing was written to "${workspaceName}". ${report.errors.length} ${report.errors.length === 1 ? "error" : "errors"} (the header is row 1, the first data row is row 2):`,
    );
    for (const error of report.errors) lines.push(`  ${where(error.row, error.column)}: ${error.message}`);
  } else if (report.outcome === "dry_run") {
    lines.push(
      `Dry run of ${fileName} (${report.rows} rows): nothing written. An import would give ${counts}.`,
    );
  } else {
    lines.push(`Imported ${fileName} into "${workspaceName}" (${report.rows} rows): ${counts}.`);
  }
  if (report.notes.length > 0) {
    lines.push("Notes:");
    for (const note of report.notes) lines.push(`  ${where(note.row, note.column)}: ${note.message}`);
  }
  lines.push(`(import #${report.importId} in the imports log)`);
  return lines.join("\n");
}

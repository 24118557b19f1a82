/**
 * `plumbline backlog import --workspace NAME FILE.csv [--dry-run]` (all or nothing, every error
 * with its row and column) and `plumbline backlog list --workspace NAME`. Works directly on the
 * database named by PLUMBLINE_DATABASE_URL.
 */
import { readFileSync } from "node:fs";
import { basename } from "node:path";
import { parseArgs } from "node:util";
import { importBacklog } from "../../backlog/import-backlog.ts";
import { listPlannedTests } from "../../backlog/planned-tests.ts";
import { ConfigError, openDatabaseFromEnv } from "../../config.ts";
import { requireWorkspaceByName, WorkspaceError } from "../../workspaces.ts";
import type { CommandIo } from "../io.ts";

export const summary = "import the backlog of planned tests from CSV, or list it";

const help = `Usage:
  plumbline backlog import --workspace NAME FILE.csv [--dry-run] [--json]
  plumbline backlog list --workspace NAME [--json]

import  reads planned tests (layout: templates/backlog-template.csv). All or nothing: with any
        error, every error is listed with its row and column and nothing is written. Rows are
        matched by key: new keys are added, changed rows updated.
list    shows the stored planned tests with their planned standard errors.`;

export async function run(args: string[], io: CommandIo): Promise<number> {
  let parsed: {
    values: { workspace?: string; json?: boolean; "dry-run"?: boolean; help?: boolean };
    positionals: string[];
  };
  try {
    parsed = parseArgs({
      args,
      strict: true,
      allowPositionals: true,
      options: {
        workspace: { type: "string" },
        json: { type: "boolean" },
        "dry-run": { type: "boolean" },
        help: { type: "boolean", short: "h" },
      },
    });
  } catch (error) {
    io.err(`plumbline backlog: ${(error as Error).message}\n\n${help}`);
    return 2;
  }
  const { values, positionals } = parsed;
  if (values.help) {
    io.out(help);
    return 0;
  }
  const [action, ...operands] = positionals;
  if (action !== "import" && action !== "list") {
    io.err(`plumbline backlog: give import or list\n\n${help}`);
    return 2;
  }
  if (!values.workspace) {
    io.err(`plumbline backlog ${action}: --workspace NAME is required\n\n${help}`);
    return 2;
  }
  if (action === "import" && operands.length !== 1) {
    io.err(`plumbline backlog import: give exactly one FILE\n\n${help}`);
    return 2;
  }
  if (action === "list" && operands.length > 0) {
    io.err(`plumbline backlog list: takes no operands\n\n${help}`);
    return 2;
  }
  let content = "";
  if (action === "import") {
    try {
      content = readFileSync(operands[0]!, "utf8");
    } catch (error) {
      io.err(`plumbline backlog import: cannot read ${operands[0]}: ${(error as Error).message}`);
      return 1;
    }
  }
  let handle: Awaited<ReturnType<typeof openDatabaseFromEnv>>;
  try {
    handle = await openDatabaseFromEnv();
  } catch (error) {
    if (error instanceof ConfigError) {
      io.err(`plumbline backlog: ${error.message}`);
      return 1;
    }
    throw error;
  }
  try {
    const workspace = await requireWorkspaceByName(handle.db, values.workspace);
    if (action === "list") {
      const tests = await listPlannedTests(handle.db, workspace.id);
      if (values.json) io.out(JSON.stringify({ workspace: workspace.name, items: tests }));
      else if (tests.length === 0)
        io.out(`No planned tests in ${workspace.name}. Import some with: plumbline backlog import`);
      else
        for (const test of tests)
          io.out(
            `${test.key}  ${test.name}  [${test.team ?? "no team"}, ${test.metric}, ${test.status}]  planned SE ${test.plannedStandardError === null ? "unknown" : `${(test.plannedStandardError * 100).toFixed(3)} %`}`,
          );
      return 0;
    }
    const report = await importBacklog(handle.db, {
      workspaceId: workspace.id,
      tokenId: null,
      fileName: basename(operands[0]!),
      content,
      dryRun: values["dry-run"] === true,
    });
    if (values.json) io.out(JSON.stringify(report));
    else if (report.outcome === "rejected") {
      io.err(`plumbline backlog import: ${report.errors.length} error(s); nothing was written:`);
      for (const error of report.errors)
        io.err(`  row ${error.row}${error.column ? `, column ${error.column}` : ""}: ${error.message}`);
    } else
      io.out(
        `${report.outcome === "dry_run" ? "Dry run (nothing written)" : "Imported"}: ${report.rows} rows, ${report.created} created, ${report.updated} updated, ${report.unchanged} unchanged.`,
      );
    return report.outcome === "rejected" ? 1 : 0;
  } catch (error) {
    if (error instanceof WorkspaceError) {
      io.err(`plumbline backlog: ${error.message}`);
      return 1;
    }
    throw error;
  } finally {
    handle.close();
  }
}

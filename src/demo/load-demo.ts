/**
 * Creates or refreshes the demo workspace: the generated history and holdouts of the invented
 * shop (generateDemo) imported through the ordinary importer, exactly as a company's own files
 * would be. Refreshing deletes the workspace's experiments (their results and realized
 * measurements go with them) and imports again, so the same seed always gives the same data.
 * Metrics are kept: the import re-declares them identically. The planned tests of the next
 * quarter (docs/examples/demo-backlog.csv) are replaced too, so the forecast has a backlog.
 */
import { readFileSync } from "node:fs";
import { eq } from "drizzle-orm";
import { issueToken } from "../api/tokens.ts";
import { type BacklogImportReport, importBacklog } from "../backlog/import-backlog.ts";
import type { Database } from "../db/client.ts";
import { experiments, plannedTests, workspaces } from "../db/schema.ts";
import { type ImportReport, importFile } from "../import/import-file.ts";
import { createWorkspace, findWorkspaceByName, type Workspace } from "../workspaces.ts";
import { defaultDemoParameters } from "./demo-parameters.ts";
import { type DemoData, type DemoOptions, generateDemo } from "./generate-demo.ts";

export const demoWorkspaceName = "demo";

/** The demo's planned next quarter: an example file users can read (docs/forecast.md walks through it). */
const demoBacklogFile = new URL("../../docs/examples/demo-backlog.csv", import.meta.url);

export interface LoadDemoOptions extends DemoOptions {
  /** Workspace name; default "demo". */
  readonly workspaceName?: string;
}

export interface LoadedDemo {
  readonly workspace: Workspace;
  /** A fresh read token for the workspace (shown once). */
  readonly token: string;
  /** The same read token, under the name the loader's contract also gives it. */
  readonly readToken: string;
  /** The admin token, only when this call created the workspace (shown once). */
  readonly adminToken?: string;
  readonly created: boolean;
  readonly history: ImportReport;
  readonly realized: ImportReport;
  /**
   * The next quarter's planned tests (docs/examples/demo-backlog.csv), for the forecast; only
   * for the demo of the default parameters, whose experiments the file names.
   */
  readonly backlog?: BacklogImportReport;
  readonly demo: DemoData;
}

/** Thrown when the demo's own files do not import cleanly (a bug: the demo must import with zero errors). */
export class DemoImportError extends Error {
  readonly report: ImportReport | BacklogImportReport;
  constructor(kind: string, report: ImportReport | BacklogImportReport) {
    const first = report.errors
      .slice(0, 5)
      .map((error) => `row ${error.row}${error.column ? `, ${error.column}` : ""}: ${error.message}`)
      .join("; ");
    super(`the demo ${kind} file was rejected with ${report.errors.length} errors (${first})`);
    this.name = "DemoImportError";
    this.report = report;
  }
}

export async function loadDemoWorkspace(db: Database, options: LoadDemoOptions = {}): Promise<LoadedDemo> {
  const name = options.workspaceName ?? demoWorkspaceName;
  const demo = generateDemo(options);
  const { company } = demo.truth.parameters;
  const description = `Demo: ${company.name}, ${company.product} (invented; generated with seed ${demo.truth.parameters.seed})`;
  let workspace = await findWorkspaceByName(db, name);
  let adminToken: string | undefined;
  const created = workspace === undefined;
  if (workspace) {
    await db.delete(plannedTests).where(eq(plannedTests.workspaceId, workspace.id));
    await db.delete(experiments).where(eq(experiments.workspaceId, workspace.id));
    // The description names the seed, which a refresh may change.
    [workspace] = await db
      .update(workspaces)
      .set({ description })
      .where(eq(workspaces.id, workspace.id))
      .returning();
    if (!workspace) throw new Error("the demo workspace disappeared during its refresh");
  } else {
    const made = await createWorkspace(db, name, {
      description,
      tokenLabel: "created with the demo workspace",
    });
    workspace = made.workspace;
    adminToken = made.token;
  }
  const history = await importFile(db, {
    workspaceId: workspace.id,
    tokenId: null,
    kind: "results",
    fileName: "demo-history.csv",
    content: demo.historyCsv,
  });
  if (history.errors.length > 0) throw new DemoImportError("history", history);
  const realized = await importFile(db, {
    workspaceId: workspace.id,
    tokenId: null,
    kind: "realized",
    fileName: "demo-realized.csv",
    content: demo.realizedCsv,
  });
  if (realized.errors.length > 0) throw new DemoImportError("realized", realized);
  // The example backlog names experiments of the default demo (its done item links to one), so
  // it is loaded only into the demo generated with the default parameters.
  const { workspaceName: _name, ...generatorOptions } = options;
  const isDefaultDemo =
    Object.values(generatorOptions).every((value) => value === undefined) ||
    (Object.keys(generatorOptions).length === 1 && generatorOptions.seed === defaultDemoParameters.seed);
  let backlog: BacklogImportReport | undefined;
  if (isDefaultDemo) {
    backlog = await importBacklog(db, {
      workspaceId: workspace.id,
      tokenId: null,
      fileName: "demo-backlog.csv",
      content: readFileSync(demoBacklogFile, "utf8"),
    });
    if (backlog.errors.length > 0) throw new DemoImportError("backlog", backlog);
  }
  const read = await issueToken(db, { workspaceId: workspace.id, role: "read", label: "demo read token" });
  return {
    workspace,
    token: read.token,
    readToken: read.token,
    ...(adminToken ? { adminToken } : {}),
    created,
    history,
    realized,
    ...(backlog ? { backlog } : {}),
    demo,
  };
}

/**
 * `plumbline workspace create NAME` (prints the workspace's first admin token, once) and
 * `plumbline workspace list`. Works directly on the database named by PLUMBLINE_DATABASE_URL.
 */
import { parseArgs } from "node:util";
import { asc } from "drizzle-orm";
import { ConfigError, openDatabaseFromEnv } from "../../config.ts";
import { workspaces } from "../../db/schema.ts";
import { createWorkspace, WorkspaceError } from "../../workspaces.ts";
import type { CommandIo } from "../io.ts";

export const summary = "create a workspace (prints its admin token once) or list workspaces";

const help = `Usage:
  plumbline workspace create NAME [--description TEXT] [--json]
  plumbline workspace list [--json]

create  makes the workspace and its first admin token; the token is printed once and only
        its hash is stored, so keep it now. With --json: {"workspace": {...}, "token": "..."}.
list    shows every workspace in the database.`;

export async function run(args: string[], io: CommandIo): Promise<number> {
  let parsed: { values: { json?: boolean; description?: string; help?: boolean }; positionals: string[] };
  try {
    parsed = parseArgs({
      args,
      strict: true,
      allowPositionals: true,
      options: {
        json: { type: "boolean" },
        description: { type: "string" },
        help: { type: "boolean", short: "h" },
      },
    });
  } catch (error) {
    io.err(`plumbline workspace: ${(error as Error).message}\n\n${help}`);
    return 2;
  }
  const { values, positionals } = parsed;
  if (values.help) {
    io.out(help);
    return 0;
  }
  const [action, ...operands] = positionals;
  if (action === "create") {
    if (operands.length !== 1) {
      io.err(
        `plumbline workspace create: give exactly one NAME${operands.length > 1 ? " (quote a name with spaces)" : ""}\n\n${help}`,
      );
      return 2;
    }
    return withDatabase(io, async (db) => {
      const created = await createWorkspace(db, operands[0] as string, {
        description: values.description ?? null,
        tokenLabel: "created with plumbline workspace create",
      });
      if (values.json) {
        io.out(JSON.stringify({ workspace: created.workspace, token: created.token }));
      } else {
        io.out(`Created workspace "${created.workspace.name}" (id ${created.workspace.id}).`);
        io.out(`Admin token (shown once; only its hash is stored): ${created.token}`);
        io.out("Use it as: Authorization: Bearer <token>. Make narrower tokens with plumbline token create.");
      }
      return 0;
    });
  }
  if (action === "list") {
    if (operands.length > 0) {
      io.err(`plumbline workspace list: takes no operands\n\n${help}`);
      return 2;
    }
    return withDatabase(io, async (db) => {
      const rows = await db.select().from(workspaces).orderBy(asc(workspaces.name));
      if (values.json) io.out(JSON.stringify({ workspaces: rows }));
      else if (rows.length === 0)
        io.out("No workspaces yet. Create one with: plumbline workspace create NAME");
      else for (const row of rows) io.out(`${row.name}  (id ${row.id}, created ${row.createdAt})`);
      return 0;
    });
  }
  io.err(
    `plumbline workspace: ${action ? `unknown action "${action}"` : "missing action"}; use create or list\n\n${help}`,
  );
  return 2;
}

/** Opens the database, runs `work`, and turns the expected failures into a message and exit code 1. */
export async function withDatabase(
  io: CommandIo,
  work: (db: Awaited<ReturnType<typeof openDatabaseFromEnv>>["db"]) => Promise<number>,
  commandName = "plumbline workspace",
): Promise<number> {
  let handle: Awaited<ReturnType<typeof openDatabaseFromEnv>>;
  try {
    handle = await openDatabaseFromEnv();
  } catch (error) {
    if (error instanceof ConfigError) {
      io.err(`${commandName}: invalid configuration: ${error.message}`);
      return 2;
    }
    io.err(`${commandName}: cannot open the database: ${(error as Error).message}`);
    return 1;
  }
  try {
    return await work(handle.db);
  } catch (error) {
    if (error instanceof WorkspaceError) {
      io.err(`${commandName}: ${error.message}`);
      return 1;
    }
    throw error;
  } finally {
    handle.close();
  }
}

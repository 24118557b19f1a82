/**
 * `plumbline token create|list|revoke --workspace NAME`: API tokens managed directly on the
 * database (for the operator; admin tokens do the same through the API).
 */
import { parseArgs } from "node:util";
import type { TokenRole } from "../../api/context.ts";
import { issueToken, listTokens, revokeToken, tokenRoles } from "../../api/tokens.ts";
import { requireWorkspaceByName } from "../../workspaces.ts";
import type { CommandIo } from "../io.ts";
import { withDatabase } from "./workspace.ts";

export const summary = "create, list or revoke API tokens of a workspace";

const help = `Usage:
  plumbline token create --workspace NAME --role read|write|admin [--label TEXT] [--json]
  plumbline token list   --workspace NAME [--json]
  plumbline token revoke --workspace NAME TOKEN_ID [--json]

Roles: read (look), write (also import and delete experiments), admin (also manage tokens).
A new token is printed once; only its hash is stored. Listings never show secrets.`;

export async function run(args: string[], io: CommandIo): Promise<number> {
  let parsed: {
    values: { workspace?: string; role?: string; label?: string; json?: boolean; help?: boolean };
    positionals: string[];
  };
  try {
    parsed = parseArgs({
      args,
      strict: true,
      allowPositionals: true,
      options: {
        workspace: { type: "string" },
        role: { type: "string" },
        label: { type: "string" },
        json: { type: "boolean" },
        help: { type: "boolean", short: "h" },
      },
    });
  } catch (error) {
    return usageError(io, (error as Error).message);
  }
  const { values, positionals } = parsed;
  if (values.help) {
    io.out(help);
    return 0;
  }
  const [action, ...operands] = positionals;
  if (action !== "create" && action !== "list" && action !== "revoke")
    return usageError(
      io,
      action ? `unknown action "${action}"; use create, list or revoke` : "missing action",
    );
  const workspaceName = values.workspace;
  if (!workspaceName) return usageError(io, "--workspace NAME is required");
  const run = (work: Parameters<typeof withDatabase>[1]) => withDatabase(io, work, "plumbline token");

  if (action === "create") {
    if (operands.length > 0) return usageError(io, "token create takes no operands");
    const role = values.role;
    if (!role) return usageError(io, "--role read|write|admin is required");
    if (!tokenRoles.includes(role as TokenRole))
      return usageError(io, `--role must be one of ${tokenRoles.join(", ")}; got "${role}"`);
    return run(async (db) => {
      const workspace = await requireWorkspaceByName(db, workspaceName);
      const issued = await issueToken(db, {
        workspaceId: workspace.id,
        role: role as TokenRole,
        label: values.label ?? null,
      });
      if (values.json)
        io.out(JSON.stringify({ workspace: workspace.name, token: issued.token, summary: issued.summary }));
      else {
        io.out(`Created a ${role} token (id ${issued.summary.id}) for workspace "${workspace.name}".`);
        io.out(`Token (shown once; only its hash is stored): ${issued.token}`);
      }
      return 0;
    });
  }

  if (action === "list") {
    if (operands.length > 0) return usageError(io, "token list takes no operands");
    return run(async (db) => {
      const workspace = await requireWorkspaceByName(db, workspaceName);
      const tokens = await listTokens(db, workspace.id);
      if (values.json) io.out(JSON.stringify({ workspace: workspace.name, tokens }));
      else
        for (const token of tokens)
          io.out(
            `${String(token.id).padStart(4)}  ${token.role.padEnd(5)}  ${token.prefix}...  ` +
              `${token.revokedAt ? `revoked ${token.revokedAt}` : `last used ${token.lastUsedAt ?? "never"}`}` +
              `${token.label ? `  (${token.label})` : ""}`,
          );
      return 0;
    });
  }

  const [idText, ...extra] = operands;
  if (!idText || extra.length > 0) return usageError(io, "token revoke takes exactly one TOKEN_ID");
  const tokenId = /^\d+$/.test(idText) ? Number(idText) : Number.NaN;
  if (!Number.isSafeInteger(tokenId) || tokenId < 1)
    return usageError(io, `TOKEN_ID must be a positive integer (see token list); got "${idText}"`);
  return run(async (db) => {
    const workspace = await requireWorkspaceByName(db, workspaceName);
    const revoked = await revokeToken(db, workspace.id, tokenId);
    if (!revoked) {
      io.err(`plumbline token revoke: workspace "${workspace.name}" has no token ${tokenId}`);
      return 1;
    }
    if (values.json) io.out(JSON.stringify({ workspace: workspace.name, token: revoked }));
    else io.out(`Token ${tokenId} of workspace "${workspace.name}" is revoked (since ${revoked.revokedAt}).`);
    return 0;
  });
}

function usageError(io: CommandIo, message: string): number {
  io.err(`plumbline token: ${message}\n\n${help}`);
  return 2;
}

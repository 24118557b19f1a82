/**
 * The base commands in process: `workspace create|list`, `token create|list|revoke`, `serve`.
 * They work directly on the database named by PLUMBLINE_DATABASE_URL (a temporary file here).
 */
import { mkdtempSync, rmSync } from "node:fs";
import { createServer } from "node:net";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { createApp } from "../../src/api/app.ts";
import { resolveToken } from "../../src/api/tokens.ts";
import { run as runServe } from "../../src/cli/commands/serve.ts";
import { memoryIo } from "../../src/cli/io.ts";
import { main } from "../../src/cli/main.ts";
import { createDb, type DatabaseHandle } from "../../src/db/client.ts";

let folder: string;
let databaseUrl: string;
let savedUrl: string | undefined;
let savedPort: string | undefined;

async function cli(...argv: string[]) {
  const io = memoryIo();
  const code = await main(argv, io);
  return { code, stdout: io.stdout, stderr: io.stderr.join("\n") };
}

/** The one JSON document a --json command printed. */
function onlyJson<T>(stdout: string[]): T {
  expect(stdout).toHaveLength(1);
  return JSON.parse(stdout[0] ?? "") as T;
}

async function withDatabase<T>(work: (handle: DatabaseHandle) => Promise<T>): Promise<T> {
  const handle = await createDb(databaseUrl);
  try {
    return await work(handle);
  } finally {
    handle.close();
  }
}

function freePort(): Promise<number> {
  return new Promise((resolvePort, reject) => {
    const server = createServer();
    server.once("error", reject);
    server.listen(0, "127.0.0.1", () => {
      const address = server.address();
      const port = typeof address === "object" && address ? address.port : 0;
      server.close(() => resolvePort(port));
    });
  });
}

beforeAll(() => {
  folder = mkdtempSync(join(tmpdir(), "plumbline-cli-"));
  databaseUrl = `file:${join(folder, "cli.db")}`;
  savedUrl = process.env["PLUMBLINE_DATABASE_URL"];
  savedPort = process.env["PORT"];
  process.env["PLUMBLINE_DATABASE_URL"] = databaseUrl;
  delete process.env["PORT"];
});

afterAll(() => {
  if (savedUrl === undefined) delete process.env["PLUMBLINE_DATABASE_URL"];
  else process.env["PLUMBLINE_DATABASE_URL"] = savedUrl;
  if (savedPort !== undefined) process.env["PORT"] = savedPort;
  rmSync(folder, { recursive: true, force: true });
});

describe("workspace", () => {
  it("create --json prints {workspace, token} with a working admin token", async () => {
    const { code, stdout } = await cli("workspace", "create", "Heron Outfitters", "--json");
    expect(code).toBe(0);
    const printed = onlyJson<{ workspace: { id: number; name: string }; token: string }>(stdout);
    expect(printed.workspace.name).toBe("Heron Outfitters");
    expect(printed.token).toMatch(/^plb_[A-Za-z0-9_-]{43}$/);
    const resolved = await withDatabase((handle) => resolveToken(handle.db, printed.token));
    expect(resolved).toMatchObject({ role: "admin", workspaceId: printed.workspace.id });
  });

  it("refuses a second workspace of the same name with exit 1 and a clear message", async () => {
    const { code, stdout, stderr } = await cli("workspace", "create", "Heron Outfitters", "--json");
    expect(code).toBe(1);
    expect(stdout).toEqual([]);
    expect(stderr).toContain('workspace "Heron Outfitters" already exists');
  });

  it("refuses usage errors with exit 2", async () => {
    expect((await cli("workspace", "create")).code).toBe(2);
    expect((await cli("workspace", "create", "a", "b")).code).toBe(2);
    expect((await cli("workspace", "rename", "x")).code).toBe(2);
    const unknownFlag = await cli("workspace", "create", "x", "--colour", "red");
    expect(unknownFlag.code).toBe(2);
    expect(unknownFlag.stderr).toContain("--colour");
  });

  it("lists workspaces", async () => {
    const { code, stdout } = await cli("workspace", "list", "--json");
    expect(code).toBe(0);
    const printed = onlyJson<{ workspaces: { name: string }[] }>(stdout);
    expect(printed.workspaces.map((workspace) => workspace.name)).toContain("Heron Outfitters");
  });

  it("names the variable when the configuration is invalid", async () => {
    process.env["PLUMBLINE_DATABASE_URL"] = "postgres://localhost/plumbline";
    try {
      const { code, stderr } = await cli("workspace", "create", "Other", "--json");
      expect(code).toBe(2);
      expect(stderr).toContain("PLUMBLINE_DATABASE_URL");
    } finally {
      process.env["PLUMBLINE_DATABASE_URL"] = databaseUrl;
    }
  });
});

describe("token", () => {
  it("create --role read gives a token that can read and not write through the API", async () => {
    const { code, stdout } = await cli(
      "token",
      "create",
      "--workspace",
      "Heron Outfitters",
      "--role",
      "read",
      "--label",
      "board report",
      "--json",
    );
    expect(code).toBe(0);
    const printed = onlyJson<{ token: string; summary: { id: number; role: string; label: string } }>(stdout);
    expect(printed.summary).toMatchObject({ role: "read", label: "board report" });
    await withDatabase(async (handle) => {
      const app = createApp({ db: handle.db });
      const headers = { authorization: `Bearer ${printed.token}` };
      const workspace = await app.request("/api/v1/workspace", { headers });
      expect(workspace.status).toBe(200);
      expect(await workspace.json()).toMatchObject({ name: "Heron Outfitters", caller: { role: "read" } });
      const write = await app.request("/api/v1/imports", {
        method: "POST",
        headers: { ...headers, "content-type": "text/csv" },
        body: "experiment\n",
      });
      expect(write.status).toBe(403);
    });
  });

  it("list never prints secrets; revoke makes the token answer 401", async () => {
    const created = onlyJson<{ token: string; summary: { id: number } }>(
      (await cli("token", "create", "--workspace", "Heron Outfitters", "--role", "write", "--json")).stdout,
    );
    const listed = await cli("token", "list", "--workspace", "Heron Outfitters", "--json");
    expect(listed.code).toBe(0);
    const text = listed.stdout.join("\n");
    expect(text).not.toContain(created.token);
    expect(text).not.toMatch(/tokenHash|token_hash/);
    const tokens = onlyJson<{ tokens: { id: number; prefix: string }[] }>(listed.stdout).tokens;
    expect(tokens.find((token) => token.id === created.summary.id)?.prefix).toBe(created.token.slice(0, 10));

    const revoked = await cli(
      "token",
      "revoke",
      "--workspace",
      "Heron Outfitters",
      String(created.summary.id),
      "--json",
    );
    expect(revoked.code).toBe(0);
    expect(onlyJson<{ token: { revokedAt: string | null } }>(revoked.stdout).token.revokedAt).not.toBeNull();
    await withDatabase(async (handle) => {
      const app = createApp({ db: handle.db });
      const response = await app.request("/api/v1/workspace", {
        headers: { authorization: `Bearer ${created.token}` },
      });
      expect(response.status).toBe(401);
    });
  });

  it("fails clearly on a missing workspace, a bad role, a bad id", async () => {
    const missing = await cli("token", "create", "--workspace", "Nowhere", "--role", "read", "--json");
    expect(missing.code).toBe(1);
    expect(missing.stdout).toEqual([]);
    expect(missing.stderr).toContain('no workspace named "Nowhere"');
    const badRole = await cli("token", "create", "--workspace", "Heron Outfitters", "--role", "owner");
    expect(badRole.code).toBe(2);
    expect(badRole.stderr).toContain("--role must be one of read, write, admin");
    const noRole = await cli("token", "create", "--workspace", "Heron Outfitters");
    expect(noRole.code).toBe(2);
    expect(noRole.stderr).toContain("--role");
    const noWorkspace = await cli("token", "list");
    expect(noWorkspace.code).toBe(2);
    expect(noWorkspace.stderr).toContain("--workspace");
    const badId = await cli("token", "revoke", "--workspace", "Heron Outfitters", "first");
    expect(badId.code).toBe(2);
    const unknownId = await cli("token", "revoke", "--workspace", "Heron Outfitters", "9999");
    expect(unknownId.code).toBe(1);
    expect(unknownId.stderr).toContain("no token 9999");
  });
});

describe("serve", () => {
  it("listens on the given port and answers health", async () => {
    const port = await freePort();
    let stop: () => void = () => undefined;
    const stopped = new Promise<void>((resolveStop) => {
      stop = resolveStop;
    });
    const io = memoryIo();
    const running = runServe(["--port", String(port), "--host", "127.0.0.1", "--json"], io, { stopped });
    await expect.poll(() => io.stdout.length, { timeout: 10_000 }).toBe(1);
    const printed = JSON.parse(io.stdout[0] ?? "") as { url: string };
    expect(printed.url).toBe(`http://127.0.0.1:${port}`);
    const health = await fetch(`${printed.url}/api/health`);
    expect(health.status).toBe(200);
    stop();
    expect(await running).toBe(0);
  });

  it("with --demo prints the address, a read token and a curl line", async () => {
    const port = await freePort();
    let stop: () => void = () => undefined;
    const stopped = new Promise<void>((resolveStop) => {
      stop = resolveStop;
    });
    const io = memoryIo();
    const running = runServe(["--port", String(port), "--host", "127.0.0.1", "--demo"], io, { stopped });
    await expect
      .poll(() => io.stdout.some((line) => line.startsWith("Press Ctrl+C")), { timeout: 60_000 })
      .toBe(true);
    const text = io.stdout.join("\n");
    expect(text).toContain(`http://127.0.0.1:${port}`);
    const token = /read token \(shown once\): (plb_\S+)/.exec(text)?.[1];
    expect(token).toBeDefined();
    expect(text).toContain(`curl -H "Authorization: Bearer ${token}"`);
    const response = await fetch(`http://127.0.0.1:${port}/api/v1/experiments?limit=1`, {
      headers: { authorization: `Bearer ${token}` },
    });
    expect(response.status).toBe(200);
    expect(((await response.json()) as { total: number }).total).toBeGreaterThan(100);
    stop();
    expect(await running).toBe(0);
  }, 90_000);

  it("refuses a bad port naming the option or the variable", async () => {
    const io = memoryIo();
    expect(await runServe(["--port", "eighty"], io)).toBe(2);
    expect(io.stderr.join("\n")).toContain("--port: must be an integer from 1 to 65535");
    process.env["PORT"] = "99999";
    try {
      const fromEnvironment = memoryIo();
      expect(await runServe([], fromEnvironment)).toBe(2);
      expect(fromEnvironment.stderr.join("\n")).toContain("PORT: must be an integer from 1 to 65535");
    } finally {
      delete process.env["PORT"];
    }
  });

  it("refuses a preparation interval that is not a number of seconds, naming the option", async () => {
    for (const value of ["-1", "soon", ""]) {
      const io = memoryIo();
      expect(await runServe([`--prepare-reviews-every=${value}`], io)).toBe(2);
      expect(io.stderr.join("\n")).toContain("--prepare-reviews-every must be a number of seconds");
    }
  });
});

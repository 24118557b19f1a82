/**
 * The authorization matrix: two workspaces x every kind of credential x every route, each cell
 * asserted. Rules (common practice for multi-tenant APIs, and this API's contract):
 * - no usable token (missing, malformed, unknown, revoked) -> 401, whatever the route;
 * - a role below the route's need -> 403 (read < write < admin), checked before the lookup, so a
 *   read token cannot learn whether another workspace's resource exists by trying to write it;
 * - another workspace's resource -> 404 with no data from it (identical to a key never used);
 * - otherwise the route's success status.
 * Beyond the routes listed here (with exact statuses and cross-workspace cells), the last tests
 * read the OpenAPI document: every route must declare the role it needs (`x-required-role`), and
 * every route, of any module, is checked against that role and against unusable tokens.
 */
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { createApp } from "../../src/api/app.ts";
import type { TokenRole } from "../../src/api/context.ts";
import { generateToken, issueToken } from "../../src/api/tokens.ts";
import { createTestDb } from "../helpers/db.ts";
import { insertVictimExperiment, type SeededWorkspace, seedWorkspace } from "./seed-workspace.ts";

type Credential =
  | "read"
  | "write"
  | "admin"
  | "revoked"
  | "missing"
  | "malformed"
  | "wrong-scheme"
  | "unknown";
const credentials: readonly Credential[] = [
  "read",
  "write",
  "admin",
  "revoked",
  "missing",
  "malformed",
  "wrong-scheme",
  "unknown",
];
const roleOf: Partial<Record<Credential, TokenRole>> = { read: "read", write: "write", admin: "admin" };
const rank: Record<TokenRole, number> = { read: 0, write: 1, admin: 2 };

interface RouteCase {
  readonly method: "GET" | "POST" | "DELETE";
  /** The path as the OpenAPI document writes it. */
  readonly template: string;
  readonly needs: TokenRole;
  readonly success: number;
  /** Whether the path names one resource of a workspace (then cross-workspace cells are run). */
  readonly scoped: boolean;
  /** The concrete path for a resource of `target` (may create a throwaway resource). */
  path(target: SeededWorkspace, cell: string): Promise<string> | string;
  readonly body?: () => { contentType: string; text: string };
}

const csvHeader =
  "experiment,name,team,metric,metric_kind,direction,started_on,ended_on,decision,is_aa,stopped_early," +
  "planned_alpha,planned_power,planned_mde,control_n,treatment_n,control_conversions,treatment_conversions," +
  "control_mean,control_sd,treatment_mean,treatment_sd,lift,lift_se,lift_ci_low,lift_ci_high,ci_level,p_value,primary";
const csvRow =
  "matrix-001,Matrix check,checkout,conversion,binary,increase,2024-01-01,2024-01-15,pending,no,no,,,,,,,,,,,,0.01,0.005,,,,,yes";

let handle: Awaited<ReturnType<typeof createTestDb>>;
let app: ReturnType<typeof createApp>;
let alpha: SeededWorkspace;
let beta: SeededWorkspace;
let victimCounter = 0;

const routes: readonly RouteCase[] = [
  {
    method: "GET",
    template: "/api/v1/workspace",
    needs: "read",
    success: 200,
    scoped: false,
    path: () => "/api/v1/workspace",
  },
  {
    method: "GET",
    template: "/api/v1/tokens",
    needs: "admin",
    success: 200,
    scoped: false,
    path: () => "/api/v1/tokens",
  },
  {
    method: "POST",
    template: "/api/v1/tokens",
    needs: "admin",
    success: 201,
    scoped: false,
    path: () => "/api/v1/tokens",
    body: () => ({
      contentType: "application/json",
      text: JSON.stringify({ role: "read", label: "matrix" }),
    }),
  },
  {
    method: "DELETE",
    template: "/api/v1/tokens/{id}",
    needs: "admin",
    success: 200,
    scoped: true,
    path: async (target) => {
      const victim = await issueToken(handle.db, { workspaceId: target.id, role: "read", label: "victim" });
      return `/api/v1/tokens/${victim.summary.id}`;
    },
  },
  {
    method: "GET",
    template: "/api/v1/metrics",
    needs: "read",
    success: 200,
    scoped: false,
    path: () => "/api/v1/metrics",
  },
  {
    method: "GET",
    template: "/api/v1/metrics/{key}",
    needs: "read",
    success: 200,
    scoped: true,
    path: (target) => `/api/v1/metrics/${encodeURIComponent(target.metricKeys[1] ?? "")}`,
  },
  {
    method: "GET",
    template: "/api/v1/experiments",
    needs: "read",
    success: 200,
    scoped: false,
    path: () => "/api/v1/experiments",
  },
  {
    method: "GET",
    template: "/api/v1/experiments/{key}",
    needs: "read",
    success: 200,
    scoped: true,
    path: (target) => `/api/v1/experiments/${encodeURIComponent(target.experimentKeys[0] ?? "")}`,
  },
  {
    method: "DELETE",
    template: "/api/v1/experiments/{key}",
    needs: "write",
    success: 200,
    scoped: true,
    path: async (target) => {
      victimCounter += 1;
      const key = await insertVictimExperiment(
        handle.db,
        target.id,
        `${target.name}-victim-${victimCounter}`,
      );
      return `/api/v1/experiments/${encodeURIComponent(key)}`;
    },
  },
  {
    method: "GET",
    template: "/api/v1/results",
    needs: "read",
    success: 200,
    scoped: false,
    path: () => "/api/v1/results",
  },
  {
    method: "GET",
    template: "/api/v1/results/{id}",
    needs: "read",
    success: 200,
    scoped: true,
    path: (target) => `/api/v1/results/${target.resultIds[0]}`,
  },
  {
    method: "GET",
    template: "/api/v1/realized-measurements",
    needs: "read",
    success: 200,
    scoped: false,
    path: () => "/api/v1/realized-measurements",
  },
  {
    method: "POST",
    template: "/api/v1/imports",
    needs: "write",
    success: 200,
    scoped: false,
    path: () => "/api/v1/imports",
    body: () => ({
      contentType: "application/json",
      text: JSON.stringify({
        fileName: "matrix.csv",
        content: `${csvHeader}\n${csvRow}\n`,
        kind: "results",
        dryRun: true,
      }),
    }),
  },
  {
    method: "GET",
    template: "/api/v1/imports",
    needs: "read",
    success: 200,
    scoped: false,
    path: () => "/api/v1/imports",
  },
  {
    method: "GET",
    template: "/api/v1/imports/{id}",
    needs: "read",
    success: 200,
    scoped: true,
    path: (target) => `/api/v1/imports/${target.importIds[0]}`,
  },
  {
    method: "GET",
    template: "/api/v1/review/runs/{id}",
    needs: "read",
    success: 200,
    scoped: true,
    // A run of the target workspace (started with its own token), whatever state it is in.
    path: async (target) => {
      const started = await app.request("/api/v1/review/runs", {
        method: "POST",
        headers: { authorization: `Bearer ${target.tokens.read}`, "content-type": "application/json" },
        body: JSON.stringify({ settings: { bootstrap: 0 } }),
      });
      return `/api/v1/review/runs/${((await started.json()) as { id: string }).id}`;
    },
  },
];

function authorizationHeader(caller: SeededWorkspace, credential: Credential): string | undefined {
  switch (credential) {
    case "read":
    case "write":
    case "admin":
    case "revoked":
      return `Bearer ${caller.tokens[credential]}`;
    case "missing":
      return undefined;
    case "malformed":
      return "Bearer";
    case "wrong-scheme":
      return `Basic ${Buffer.from(`user:${caller.tokens.admin}`).toString("base64")}`;
    case "unknown":
      return `Bearer ${generateToken()}`;
  }
}

async function openApiDocument() {
  return (await (await app.request("/api/openapi.json")).json()) as {
    paths: Record<string, Record<string, Record<string, unknown>>>;
  };
}

function expectedStatus(route: RouteCase, credential: Credential, crossWorkspace: boolean): number {
  const role = roleOf[credential];
  if (!role) return 401;
  if (rank[role] < rank[route.needs]) return 403;
  if (crossWorkspace) return 404;
  return route.success;
}

beforeAll(async () => {
  handle = await createTestDb();
  app = createApp({ db: handle.db }, { logError: () => undefined });
  alpha = await seedWorkspace(handle.db, "alpha");
  beta = await seedWorkspace(handle.db, "beta");
});

afterAll(() => handle.dispose());

describe("authorization matrix", () => {
  const cells: { route: RouteCase; callerName: "alpha" | "beta"; credential: Credential; cross: boolean }[] =
    [];
  for (const route of routes)
    for (const callerName of ["alpha", "beta"] as const)
      for (const credential of credentials)
        for (const cross of route.scoped ? [false, true] : [false])
          cells.push({ route, callerName, credential, cross });

  it.each(
    cells.map((cell) => ({
      ...cell,
      label: `${cell.route.method} ${cell.route.template} by ${cell.callerName}/${cell.credential}${cell.cross ? " on the other workspace" : ""}`,
    })),
  )("$label", async ({ route, callerName, credential, cross }) => {
    const caller = callerName === "alpha" ? alpha : beta;
    const other = callerName === "alpha" ? beta : alpha;
    const target = cross ? other : caller;
    const path = await route.path(target, callerName);
    const headers: Record<string, string> = {};
    const authorization = authorizationHeader(caller, credential);
    if (authorization) headers["authorization"] = authorization;
    const body = route.body?.();
    if (body) headers["content-type"] = body.contentType;
    const response = await app.request(path, {
      method: route.method,
      headers,
      ...(body ? { body: body.text } : {}),
    });
    const text = await response.text();
    const expected = expectedStatus(route, credential, cross);
    expect(response.status, `${route.method} ${path} -> ${text.slice(0, 300)}`).toBe(expected);
    const json = JSON.parse(text) as { error?: { code: string; message: string } };
    if (expected >= 400) {
      expect(json.error?.code).toBe({ 401: "unauthorized", 403: "forbidden", 404: "not_found" }[expected]);
      expect(typeof json.error?.message).toBe("string");
    }
    // Nothing of the other workspace ever shows, in any cell (a 404 may echo the key asked for).
    const requestedKey = decodeURIComponent(path.split("/").pop() ?? "");
    const shown = text.replaceAll(`\\"${requestedKey}\\"`, "");
    expect(shown).not.toContain(other.marker);
    expect(shown).not.toContain(`"${other.name}-`);
  });

  it("a cross-workspace delete leaves the other workspace's resource in place", async () => {
    const key = await insertVictimExperiment(handle.db, beta.id, "beta-kept");
    const denied = await app.request(`/api/v1/experiments/${key}`, {
      method: "DELETE",
      headers: { authorization: `Bearer ${alpha.tokens.admin}` },
    });
    expect(denied.status).toBe(404);
    const kept = await app.request(`/api/v1/experiments/${key}`, {
      headers: { authorization: `Bearer ${beta.tokens.read}` },
    });
    expect(kept.status).toBe(200);
  });

  it("lists hold only the caller's own records", async () => {
    for (const [caller, path, key] of [
      [alpha, "/api/v1/experiments?limit=500", "key"],
      [beta, "/api/v1/results?limit=500", "experimentKey"],
      [alpha, "/api/v1/realized-measurements", "experimentKey"],
    ] as const) {
      const response = await app.request(path, {
        headers: { authorization: `Bearer ${caller.tokens.read}` },
      });
      const page = (await response.json()) as { items: Record<string, string>[]; total: number };
      expect(page.items.length).toBeGreaterThan(0);
      for (const item of page.items)
        expect(item[key]?.startsWith(`${caller.name}-`), JSON.stringify(item)).toBe(true);
    }
  });

  it("documents every served route; the routes listed here declare the role they need", async () => {
    const document = await openApiDocument();
    const documented = new Map<string, string | undefined>();
    for (const [path, item] of Object.entries(document.paths))
      for (const [method, operation] of Object.entries(item))
        if (path.startsWith("/api/v1/"))
          documented.set(
            `${method.toUpperCase()} ${path}`,
            operation["x-required-role"] as string | undefined,
          );
    const registered = app.routes
      .filter((route) => route.path.startsWith("/api/v1/") && route.method !== "ALL")
      .map((route) => `${route.method} ${route.path.replace(/:([A-Za-z]+)/g, "{$1}")}`);
    expect(
      registered.filter((route) => !documented.has(route)),
      "served but not in /api/openapi.json",
    ).toEqual([]);
    for (const route of routes)
      expect(documented.get(`${route.method} ${route.template}`), route.template).toBe(route.needs);
  });

  it("every documented route answers by its declared role: 403 below it, never 401/403 at or above it", async () => {
    // Derived from the document, so every route of every module is covered as soon as it is
    // added; a route that does not declare its role (requiredRole from src/api/auth.ts) fails.
    // Path parameters name nothing that exists (999999), so no cell changes a stored record.
    const document = await openApiDocument();
    const undeclared: string[] = [];
    for (const [template, item] of Object.entries(document.paths)) {
      if (!template.startsWith("/api/v1/")) continue;
      const path = template.replace(/\{[^}]+\}/g, "999999");
      for (const [method, operation] of Object.entries(item)) {
        const needs = operation["x-required-role"] as TokenRole | undefined;
        if (!needs) {
          undeclared.push(`${method.toUpperCase()} ${template}`);
          continue;
        }
        for (const credential of ["read", "write", "admin"] as const) {
          const response = await app.request(path, {
            method: method.toUpperCase(),
            headers: {
              authorization: `Bearer ${alpha.tokens[credential]}`,
              "content-type": "application/json",
            },
            ...(method === "get" || method === "delete" ? {} : { body: "{}" }),
          });
          const label = `${method.toUpperCase()} ${path} (needs ${needs}) with a ${credential} token`;
          if (rank[credential] < rank[needs]) expect(response.status, label).toBe(403);
          else expect([401, 403], label).not.toContain(response.status);
        }
      }
    }
    expect(undeclared, "routes that do not declare their role with requiredRole").toEqual([]);
  });

  it("every documented route refuses an unusable token, whatever its parameters", async () => {
    const document = await openApiDocument();
    let checked = 0;
    for (const [template, item] of Object.entries(document.paths)) {
      if (!template.startsWith("/api/v1/")) continue;
      const path = template.replace(/\{[^}]+\}/g, "999999");
      for (const method of Object.keys(item)) {
        for (const credential of ["missing", "malformed", "wrong-scheme", "unknown", "revoked"] as const) {
          const authorization = authorizationHeader(alpha, credential);
          const response = await app.request(path, {
            method: method.toUpperCase(),
            headers: { ...(authorization ? { authorization } : {}), "content-type": "application/json" },
            ...(method === "get" || method === "delete" ? {} : { body: "{}" }),
          });
          expect(response.status, `${method.toUpperCase()} ${path} with ${credential}`).toBe(401);
          checked += 1;
        }
      }
    }
    expect(checked).toBeGreaterThanOrEqual(routes.length * 5);
  });
});

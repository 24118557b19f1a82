/**
 * The app's shared behaviour: health without a token, the one error envelope, validation errors
 * that name the field, body size limit, request ids, the OpenAPI document and the pages.
 */
import { createHash } from "node:crypto";
import { eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { createApp } from "../../src/api/app.ts";
import { isWellFormedToken, lastUsedIsStale, lastUsedResolutionMs } from "../../src/api/tokens.ts";
import { apiTokens } from "../../src/db/schema.ts";
import { StatsInputError } from "../../src/stats/errors.ts";
import { createTestDb } from "../helpers/db.ts";
import { type SeededWorkspace, seedWorkspace } from "./seed-workspace.ts";

let handle: Awaited<ReturnType<typeof createTestDb>>;
let app: ReturnType<typeof createApp>;
let alpha: SeededWorkspace;
const logged: string[] = [];

interface Envelope {
  error: { code: string; message: string; issues?: { path: string; message: string; row?: number }[] };
}

function get(path: string, token: string | undefined = alpha.tokens.read) {
  return app.request(path, token ? { headers: { authorization: `Bearer ${token}` } } : {});
}

function postJson(path: string, body: unknown, token = alpha.tokens.admin) {
  return app.request(path, {
    method: "POST",
    headers: { authorization: `Bearer ${token}`, "content-type": "application/json" },
    body: typeof body === "string" ? body : JSON.stringify(body),
  });
}

beforeAll(async () => {
  handle = await createTestDb();
  app = createApp({ db: handle.db }, { logError: (message) => logged.push(message) });
  // Routes that fail on purpose, to check how the one error handler maps what they throw.
  app.get("/api/failures/stats", () => {
    throw new StatsInputError("winRate", "strictly between 0 and 1", 1.5);
  });
  app.get("/api/failures/unexpected", () => {
    throw new Error("secret internal detail");
  });
  alpha = await seedWorkspace(handle.db, "alpha");
});

afterAll(() => handle.dispose());

describe("health and envelope", () => {
  it("answers /api/health without a token", async () => {
    const response = await app.request("/api/health");
    expect(response.status).toBe(200);
    expect(await response.json()).toEqual({ status: "ok", database: "ok", apiVersion: "1" });
  });

  it("answers 503 from /api/health when the database does not answer", async () => {
    const closed = await createTestDb();
    const closedApp = createApp({ db: closed.db }, { logError: () => undefined });
    closed.dispose();
    const response = await closedApp.request("/api/health");
    expect(response.status).toBe(503);
    expect(await response.json()).toMatchObject({ status: "unavailable", database: "unreachable" });
  });

  it("answers unknown routes with the 404 envelope", async () => {
    const response = await app.request("/api/nothing-here");
    expect(response.status).toBe(404);
    const body = (await response.json()) as Envelope;
    expect(body.error.code).toBe("not_found");
    expect(body.error.message).toContain("/api/nothing-here");
    // The routes are public (see /api/openapi.json), so an unknown one is 404 with or without a token.
    expect((await get("/api/v1/nothing-here", undefined)).status).toBe(404);
    expect((await get("/api/v1/nothing-here")).status).toBe(404);
  });

  it("maps StatsInputError to 422 naming the parameter", async () => {
    const response = await app.request("/api/failures/stats");
    expect(response.status).toBe(422);
    const body = (await response.json()) as Envelope;
    expect(body.error.code).toBe("unprocessable");
    expect(body.error.issues?.[0]?.path).toBe("winRate");
    expect(body.error.message).toBe("winRate must be strictly between 0 and 1; got 1.5");
  });

  it("turns unexpected errors into a generic 500 and logs them with the request id", async () => {
    const response = await app.request("/api/failures/unexpected");
    expect(response.status).toBe(500);
    const requestId = response.headers.get("x-request-id");
    expect(requestId).toBeTruthy();
    const text = await response.text();
    expect(text).not.toContain("secret internal detail");
    const body = JSON.parse(text) as Envelope;
    expect(body.error.code).toBe("internal");
    expect(body.error.message).toContain(requestId);
    expect(logged.some((line) => line.includes(requestId ?? "?"))).toBe(true);
  });

  it("gives every response a request id", async () => {
    const response = await app.request("/api/health");
    expect(response.headers.get("x-request-id")).toMatch(/\S+/);
  });
});

describe("validation errors name the field", () => {
  const cases: [string, string][] = [
    ["/api/v1/experiments?limit=0", "limit"],
    ["/api/v1/experiments?limit=501", "limit"],
    ["/api/v1/experiments?offset=-1", "offset"],
    ["/api/v1/experiments?decision=won", "decision"],
    ["/api/v1/experiments?from=2024-02-30", "from"],
    ["/api/v1/experiments?to=March", "to"],
    ["/api/v1/experiments?from=2024-05-01&to=2024-04-01", "to"],
    ["/api/v1/results?primary=yes", "primary"],
    ["/api/v1/realized-measurements?method=survey", "method"],
    ["/api/v1/results/abc", "id"],
  ];
  it.each(cases)("%s -> 400 naming %s", async (path, field) => {
    const response = await get(path);
    expect(response.status).toBe(400);
    const body = (await response.json()) as Envelope;
    expect(body.error.code).toBe("validation_failed");
    expect(body.error.issues?.map((issue) => issue.path)).toContain(field);
    expect(body.error.message).toContain(field);
  });

  it("names each bad field of a JSON body", async () => {
    const response = await postJson("/api/v1/tokens", { role: "owner", label: "" });
    expect(response.status).toBe(400);
    const body = (await response.json()) as Envelope;
    expect(body.error.issues?.map((issue) => issue.path).sort()).toEqual(["label", "role"]);
  });

  it("names a missing field of an import body", async () => {
    const response = await postJson(
      "/api/v1/imports",
      { fileName: "a.csv", kind: "results" },
      alpha.tokens.write,
    );
    expect(response.status).toBe(400);
    expect(((await response.json()) as Envelope).error.issues?.map((issue) => issue.path)).toContain(
      "content",
    );
  });

  it("refuses malformed JSON with the envelope", async () => {
    const response = await postJson("/api/v1/tokens", "{not json");
    expect(response.status).toBe(400);
    expect(((await response.json()) as Envelope).error.code).toBe("bad_request");
  });
});

describe("body size limit", () => {
  it("answers 413 with a message giving the limit", async () => {
    const small = createApp({ db: handle.db }, { maximumBodyBytes: 1024 });
    const response = await small.request("/api/v1/imports", {
      method: "POST",
      headers: { authorization: `Bearer ${alpha.tokens.write}`, "content-type": "text/csv" },
      body: "x".repeat(2048),
    });
    expect(response.status).toBe(413);
    const body = (await response.json()) as Envelope;
    expect(body.error.code).toBe("payload_too_large");
    expect(body.error.message).toContain("1 KiB");
  });
});

describe("tokens", () => {
  it("are plb_ + 32 random bytes in base64url, stored only as their SHA-256", async () => {
    const response = await postJson("/api/v1/tokens", { role: "write", label: "notebook" });
    expect(response.status).toBe(201);
    const { token, summary } = (await response.json()) as { token: string; summary: { id: number } };
    expect(token).toMatch(/^plb_[A-Za-z0-9_-]{43}$/);
    expect(Buffer.from(token.slice(4), "base64url")).toHaveLength(32);
    expect(isWellFormedToken(token)).toBe(true);
    const [row] = await handle.db.select().from(apiTokens).where(eq(apiTokens.id, summary.id));
    expect(row?.tokenHash).toBe(createHash("sha256").update(token).digest("hex"));
    expect(Object.values(row ?? {})).not.toContain(token);
    // The listing never shows the secret again.
    const listing = await (await get("/api/v1/tokens", alpha.tokens.admin)).text();
    expect(listing).not.toContain(token);
    expect(listing).not.toContain(row?.tokenHash);
  });

  it("record when they were last used, to the minute", async () => {
    const created = (await (await postJson("/api/v1/tokens", { role: "read" })).json()) as {
      token: string;
      summary: { id: number; lastUsedAt: string | null };
    };
    expect(created.summary.lastUsedAt).toBeNull();
    const lastUsed = async () =>
      (await handle.db.select().from(apiTokens).where(eq(apiTokens.id, created.summary.id)))[0]?.lastUsedAt ??
      null;
    const started = new Date().toISOString();
    expect((await get("/api/v1/workspace", created.token)).status).toBe(200);
    const first = await lastUsed();
    expect(first).not.toBeNull();
    expect((first ?? "") >= started).toBe(true);
    // A second use within the minute does not write again (no write per request).
    expect((await get("/api/v1/workspace", created.token)).status).toBe(200);
    expect(await lastUsed()).toBe(first);
    expect(lastUsedIsStale(first, new Date(Date.parse(first ?? "") + lastUsedResolutionMs))).toBe(true);
    expect(lastUsedIsStale(first, new Date(Date.parse(first ?? "") + lastUsedResolutionMs - 1))).toBe(false);
  });

  it("stop working once revoked", async () => {
    const created = (await (await postJson("/api/v1/tokens", { role: "read" })).json()) as {
      token: string;
      summary: { id: number };
    };
    expect((await get("/api/v1/workspace", created.token)).status).toBe(200);
    const revoked = await app.request(`/api/v1/tokens/${created.summary.id}`, {
      method: "DELETE",
      headers: { authorization: `Bearer ${alpha.tokens.admin}` },
    });
    expect(revoked.status).toBe(200);
    expect(((await revoked.json()) as { revokedAt: string | null }).revokedAt).not.toBeNull();
    const after = await get("/api/v1/workspace", created.token);
    expect(after.status).toBe(401);
    expect(((await after.json()) as Envelope).error.code).toBe("unauthorized");
  });
});

describe("OpenAPI document and pages", () => {
  it("documents every route the app serves under /api, with the error envelope", async () => {
    const document = (await (await app.request("/api/openapi.json")).json()) as {
      openapi: string;
      paths: Record<string, Record<string, { responses: Record<string, unknown> }>>;
      components: { schemas: Record<string, unknown>; securitySchemes: Record<string, unknown> };
    };
    expect(document.openapi).toMatch(/^3\./);
    expect(document.components.securitySchemes).toHaveProperty("bearerToken");
    expect(document.components.schemas).toHaveProperty("ErrorEnvelope");
    const documented = new Set(
      Object.entries(document.paths).flatMap(([path, item]) =>
        Object.keys(item).map((m) => `${m.toUpperCase()} ${path}`),
      ),
    );
    const served = app.routes
      .filter((route) => route.method !== "ALL" && /^\/api\/(v1\/|health)/.test(route.path))
      .map((route) => `${route.method} ${route.path.replace(/:([A-Za-z]+)/g, "{$1}")}`);
    expect(served.length).toBeGreaterThan(10);
    for (const route of served) expect(documented, route).toContain(route);
    for (const [path, item] of Object.entries(document.paths))
      if (path.startsWith("/api/v1/"))
        for (const operation of Object.values(item)) expect(operation.responses, path).toHaveProperty("401");
  });

  it("renders a readable reference with every route and no external resources", async () => {
    const response = await app.request("/api/reference");
    expect(response.status).toBe(200);
    expect(response.headers.get("content-type")).toContain("text/html");
    const html = await response.text();
    const document = (await (await app.request("/api/openapi.json")).json()) as {
      paths: Record<string, unknown>;
    };
    for (const path of Object.keys(document.paths)) expect(html).toContain(path);
    expect(html).toContain("Needs a <strong>admin</strong> token");
    expect(html).not.toContain("<script");
    expect(html).not.toMatch(/(src|href)="https?:/);
  });

  it("serves a landing page that links to the reference", async () => {
    const response = await app.request("/");
    expect(response.status).toBe(200);
    expect(await response.text()).toContain('href="/api/reference"');
  });
});

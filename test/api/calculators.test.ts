/**
 * The calculator routes in process: any valid token may call them, answers match the published
 * checks, typed refusals are 422 naming the parameter, and the routes are in the OpenAPI document.
 */
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { createApp } from "../../src/api/app.ts";
import { issueToken } from "../../src/api/tokens.ts";
import { createWorkspace } from "../../src/workspaces.ts";
import { createTestDb } from "../helpers/db.ts";
import { expectClose } from "../stats/tolerance.ts";

let handle: Awaited<ReturnType<typeof createTestDb>>;
let app: ReturnType<typeof createApp>;
let readToken: string;

beforeAll(async () => {
  handle = await createTestDb();
  app = createApp({ db: handle.db });
  const created = await createWorkspace(handle.db, "calculator-tests");
  readToken = (
    await issueToken(handle.db, { workspaceId: created.workspace.id, role: "read", label: "read" })
  ).token;
});

afterAll(() => handle.dispose());

/** token null: send no Authorization header. */
async function post(path: string, body: unknown, token: string | null = readToken) {
  const headers: Record<string, string> = { "content-type": "application/json" };
  if (token) headers.authorization = `Bearer ${token}`;
  const response = await app.request(path, { method: "POST", headers, body: JSON.stringify(body) });
  return { status: response.status, body: (await response.json()) as Record<string, unknown> };
}

describe("POST /api/v1/calculators/risk", () => {
  it("Kohavi, Deng & Vermeer (2022): win rate 1/3 -> false positive risk 5.9 %", async () => {
    const { status, body } = await post("/api/v1/calculators/risk", {
      winRate: 1 / 3,
      alpha: 0.05,
      power: 0.8,
    });
    expect(status).toBe(200);
    expectClose("falsePositiveRisk", { winRate: 1 / 3 }, body.falsePositiveRisk as number, 0.059, {
      absolute: 0.0005,
    });
    expect((body.cautions as string[]).join(" ")).toContain("statistician");
    expect((body.assumptions as string[]).length).toBeGreaterThan(0);
  });
  it("a read token is enough; no token is 401", async () => {
    expect(
      (await post("/api/v1/calculators/risk", { winRate: 0.1, alpha: 0.05, power: 0.8 }, null)).status,
    ).toBe(401);
  });
  it("out-of-range input is 422 naming the parameter; a malformed body is 400", async () => {
    const refused = await post("/api/v1/calculators/risk", { winRate: 0.1, alpha: 1.2, power: 0.8 });
    expect(refused.status).toBe(422);
    const error = refused.body.error as { code: string; issues: { path: string }[] };
    expect(error.code).toBe("unprocessable");
    expect(error.issues[0]?.path).toBe("alpha");
    expect((await post("/api/v1/calculators/risk", { winRate: "a lot" })).status).toBe(400);
  });
});

describe("POST /api/v1/calculators/design", () => {
  it("Gelman & Carlin (2014): D = 0.1, s = 3.28 -> Type S 46 %, exaggeration about 77", async () => {
    const { status, body } = await post("/api/v1/calculators/design", { effect: 0.1, standardError: 3.28 });
    expect(status).toBe(200);
    expectClose("typeS", {}, body.typeS as number, 0.46, { absolute: 0.005 });
    expectClose("exaggeration", {}, body.exaggeration as number, 77, { relative: 0.01 });
  });
  it("inverse question: effect with 80 % power at SE 1 is 2.80", async () => {
    const { body } = await post("/api/v1/calculators/design", { power: 0.8, standardError: 1 });
    expect(body.mode).toBe("power");
    expectClose("effect", {}, body.effect as number, 2.8016, { absolute: 1e-4 });
  });
  it("carries the operating curve: a 2.8 SE win ships 80 % of the time at alpha 0.05 (Gelman & Carlin 2014)", async () => {
    const { body } = await post("/api/v1/calculators/design", { effect: 2.8, standardError: 1 });
    const curve = body.operatingCurve as {
      area: number;
      points: unknown[];
      atConventionalAlphas: { alpha: number; nullShipped: number; winsShipped: number }[];
    };
    const conventional = curve.atConventionalAlphas.find((point) => point.alpha === 0.05)!;
    expectClose("nullShipped", {}, conventional.nullShipped, 0.025, { relative: 1e-15 });
    expectClose("winsShipped", {}, conventional.winsShipped, 0.8, { absolute: 0.005 });
    // Hanley & McNeil (1982): binormal area Phi(2.8 / sqrt 2) = 0.9761.
    expectClose("area", {}, curve.area, 0.9761, { absolute: 5e-5 });
    expect(curve.points).toHaveLength(41);
  });
  it("non-positive SE is 422", async () => {
    const { status } = await post("/api/v1/calculators/design", { effect: 1, standardError: 0 });
    expect(status).toBe(422);
  });
});

describe("POST /api/v1/calculators/size", () => {
  it("Cohen (1988): d = 0.8 -> 26 per group; with daily traffic, days", async () => {
    const { status, body } = await post("/api/v1/calculators/size", { sd: 1, delta: 0.8, dailyTraffic: 10 });
    expect(status).toBe(200);
    expect(body.nPerArm).toBe(26);
    expect(body.totalN).toBe(52);
    expect(body.days).toBe(6);
  });
  it("R power.prop.test(n = 50, p1 = .5, p2 = .75) -> power 0.7401659", async () => {
    const { body } = await post("/api/v1/calculators/size", { baseline: 0.5, mdeAbsolute: 0.25, n: 50 });
    expect(body.mode).toBe("power");
    expectClose("power", {}, body.power as number, 0.7401659, { absolute: 5e-8 });
  });
  it("n < 2 and a baseline outside (0, 1) are 422", async () => {
    expect((await post("/api/v1/calculators/size", { sd: 1, delta: 1, n: 1 })).status).toBe(422);
    expect((await post("/api/v1/calculators/size", { baseline: 0, mde: 0.1 })).status).toBe(422);
  });
});

describe("OpenAPI document", () => {
  it("lists the three calculator routes", async () => {
    const response = await app.request("/api/openapi.json");
    const document = (await response.json()) as { paths: Record<string, unknown> };
    for (const name of ["risk", "design", "size"])
      expect(document.paths).toHaveProperty(`/api/v1/calculators/${name}`);
  });
});

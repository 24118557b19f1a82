/**
 * `plumbline forecast` and `plumbline backlog` through the CLI in process: the stateless plan
 * form, row-and-column errors for bad plan rows, reproducible seeds, the workspace form with a
 * prior fitted to the history, and the HTML page with inline SVG charts.
 */
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { memoryIo } from "../../src/cli/io.ts";
import { main } from "../../src/cli/main.ts";
import { createDb } from "../../src/db/client.ts";
import { experiments, metrics, results, workspaces } from "../../src/db/schema.ts";
import { createRandom } from "../../src/stats/random.ts";

const folder = mkdtempSync(join(tmpdir(), "plumbline-forecast-cli-"));
const previousUrl = process.env["PLUMBLINE_DATABASE_URL"];

beforeAll(async () => {
  process.env["PLUMBLINE_DATABASE_URL"] = `file:${join(folder, "cli.db")}`;
  const handle = await createDb(process.env["PLUMBLINE_DATABASE_URL"]);
  const [workspace] = await handle.db.insert(workspaces).values({ name: "Larkspur Outfitters" }).returning();
  const workspaceId = workspace!.id;
  const [orderRate] = await handle.db
    .insert(metrics)
    .values({
      workspaceId,
      key: "order_rate",
      name: "Order rate",
      kind: "binary",
      direction: "increase",
      family: "conversion",
    })
    .returning();
  await handle.db.insert(metrics).values({
    workspaceId,
    key: "basket_value",
    name: "Basket value",
    kind: "continuous",
    direction: "increase",
    family: "revenue",
  });
  // An invented history of 60 conversion tests: 70 % null, the rest N(0.01, 0.01^2), SE 0.008.
  const random = createRandom(2024);
  for (let index = 0; index < 60; index++) {
    const [experiment] = await handle.db
      .insert(experiments)
      .values({
        workspaceId,
        key: `past-${index}`,
        name: `Past test ${index}`,
        team: "Checkout",
        plannedAlpha: 0.1,
      })
      .returning();
    const theta = random.uniform() < 0.7 ? 0 : 0.01 + 0.01 * random.normal();
    await handle.db.insert(results).values({
      experimentId: experiment!.id,
      metricId: orderRate!.id,
      isPrimary: true,
      input: {},
      inputForm: "standard_error",
      lift: theta + 0.008 * random.normal(),
      liftSe: 0.008,
    });
  }
  handle.close();
});

afterAll(() => {
  if (previousUrl === undefined) delete process.env["PLUMBLINE_DATABASE_URL"];
  else process.env["PLUMBLINE_DATABASE_URL"] = previousUrl;
  rmSync(folder, { recursive: true, force: true });
});

function file(name: string, content: string): string {
  const path = join(folder, name);
  writeFileSync(path, content);
  return path;
}

async function cli(args: string[]) {
  const io = memoryIo();
  const code = await main(args, io);
  return { code, io, json: () => JSON.parse(io.stdout.join("\n")) };
}

describe("plumbline forecast --plan", () => {
  const plan = () =>
    file(
      "plan.csv",
      ["name,team,se,n_per_arm,baseline", "a,Search,0.01,,", "b,Search,,20000,5%", "c,Checkout,0.02,,"].join(
        "\n",
      ),
    );
  const prior = ["--win-rate", "0.2", "--effect-scale", "0.02"];

  it("prints one JSON document with the required keys, and reproduces with the seed", async () => {
    const args = [
      "forecast",
      "--plan",
      plan(),
      ...prior,
      "--sims",
      "2000",
      "--seed",
      "17",
      "--target",
      "1%",
      "--json",
    ];
    const first = await cli(args);
    expect(first.code).toBe(0);
    const report = first.json();
    for (const key of [
      "seed",
      "sims",
      "shipped",
      "realWins",
      "falseWins",
      "claimedLift",
      "realizedLift",
      "probabilityToReachTarget",
      "byTeam",
      "assumptions",
      "cautions",
    ])
      expect(report, key).toHaveProperty(key);
    expect(report.seed).toBe(17);
    expect(report.sims).toBe(2000);
    expect(report.shipped).toHaveProperty("expected");
    expect(Object.keys(report.realizedLift.quantiles)).toEqual(["p5", "p25", "p50", "p75", "p95"]);
    expect(report.byTeam.map((team: { name: string }) => team.name)).toEqual(["Search", "Checkout"]);
    const again = await cli(args);
    expect(again.json()).toEqual(report);
  });

  it("shows progress on stderr while it simulates", async () => {
    const progress: string[] = [];
    const io = { ...memoryIo(), progress: (text: string) => progress.push(text) };
    const code = await main(["forecast", "--plan", plan(), ...prior, "--sims", "200000", "--json"], io);
    expect(code).toBe(0);
    expect(progress.length).toBeGreaterThan(1);
    expect(progress.at(-1)).toMatch(/200000 of 200000 simulations \(100 %\)/);
    expect(io.stdout).toHaveLength(1);
  });

  it("compares two rules on the same draws", async () => {
    const result = await cli([
      "forecast",
      "--plan",
      plan(),
      ...prior,
      "--sims",
      "1000",
      "--rule",
      "alpha=0.05",
      "--rule",
      "alpha=0.2",
      "--json",
    ]);
    const report = result.json();
    expect(report.rules.map((rule: { label: string }) => rule.label)).toEqual(["alpha=0.05", "alpha=0.2"]);
    expect(report.comparison[0].baseline).toBe("alpha=0.05");
    const text = await cli([
      "forecast",
      "--plan",
      plan(),
      ...prior,
      "--sims",
      "1000",
      "--rule",
      "alpha=0.05",
      "--rule",
      "alpha=0.2",
    ]);
    const printed = text.io.stdout.join("\n");
    expect(printed).toMatch(/alpha=0\.2 vs alpha=0\.05 \(same simulated quarters\): \+\d\.\d\d shipped/);
    // Counts are printed whole, the expectation beside the mean; the cautions close the output.
    expect(printed).toMatch(/ {2}shipped {8}\d\.\d\d \(\d\.\d\d\)( +\d+){5}\n/);
    expect(printed).toMatch(/statistician's review/);
  });

  it("lists every bad plan row with its row and column and forecasts nothing", async () => {
    const bad = file(
      "bad-plan.csv",
      [
        "name,se,n_per_arm,baseline,mean,sd",
        "ok,0.01,,,,",
        "neg,-0.01,,,,",
        ",0.01,,,,",
        "rate,,100,1.4,,",
        "nothing,,,,,",
        "meanonly,,100,,20,",
      ].join("\n"),
    );
    const result = await cli(["forecast", "--plan", bad, ...prior, "--json"]);
    expect(result.code).toBe(1);
    const issues = result
      .json()
      .error.issues.map(({ row, column }: { row: number; column: string }) => [row, column]);
    expect(issues).toEqual([
      [3, "se"],
      [4, "name"],
      [5, "baseline"],
      [6, "se"],
      [7, "sd"],
    ]);
  });

  it("refuses unknown flags and missing priors with exit code 2", async () => {
    expect((await cli(["forecast", "--plan", plan(), "--bogus"])).code).toBe(2);
    expect((await cli(["forecast", "--plan", plan()])).code).toBe(2);
    expect((await cli(["forecast", "--plan", plan(), ...prior, "--rule", "strict"])).code).toBe(2);
    const bootstrapPlan = await cli(["forecast", "--plan", plan(), ...prior, "--prior-draws", "bootstrap"]);
    expect(bootstrapPlan.code).toBe(2);
    expect(bootstrapPlan.io.stderr.join("\n")).toMatch(/needs a workspace/);
    expect((await cli(["forecast", "--plan", plan(), ...prior, "--prior-draws", "wide"])).code).toBe(2);
    expect((await cli(["forecast", "--plan", plan(), ...prior, "--bootstrap", "50"])).code).toBe(2);
  });
});

describe("plumbline backlog and forecast --workspace", () => {
  it("imports a backlog, lists it, and forecasts it with the fitted prior and an HTML page", async () => {
    const backlogFile = file(
      "backlog.csv",
      [
        "key,name,team,metric,daily_traffic,run_days,baseline_rate,standard_error,prior_win_rate,prior_effect_scale",
        "express-pay,Express pay,Checkout,order_rate,12000,14,4%,,,",
        "typo-search,Typo-tolerant search,Search,order_rate,,,,0.012,,",
        "bundles,Bundles,Checkout,basket_value,,,,0.01,0.1,0.02",
      ].join("\n"),
    );
    const imported = await cli([
      "backlog",
      "import",
      "--workspace",
      "Larkspur Outfitters",
      backlogFile,
      "--json",
    ]);
    expect(imported.code).toBe(0);
    expect(imported.json()).toMatchObject({ outcome: "applied", created: 3 });
    const listed = await cli(["backlog", "list", "--workspace", "Larkspur Outfitters", "--json"]);
    expect(listed.json().items).toHaveLength(3);

    const html = join(folder, "forecast.html");
    const result = await cli([
      "forecast",
      "--workspace",
      "Larkspur Outfitters",
      "--rule",
      "current",
      "--rule",
      "alpha=0.05",
      "--sims",
      "2000",
      "--json",
      "--html",
      html,
    ]);
    expect(result.io.stderr).toEqual([]);
    expect(result.code).toBe(0);
    const report = result.json();
    expect(report.workspace).toBe("Larkspur Outfitters");
    expect(report.priors).toHaveLength(1);
    expect(report.priors[0]).toMatchObject({ family: "conversion", source: "fitted", observations: 60 });
    // The history's teams plan with alpha 0.1: that is the current rule.
    expect(report.rules[0].alpha).toBeCloseTo(0.1, 12);
    expect(report.byFamily.map((family: { name: string }) => family.name).sort()).toEqual([
      "conversion",
      "revenue",
    ]);
    const page = readFileSync(html, "utf8");
    expect(page).toContain("<svg");
    expect(page).not.toMatch(/<script|https?:\/\/(?!www\.w3\.org|vega\.github\.io)/);
    // The page carries the comparison on common draws, the groups, each planned test and the priors.
    for (const section of [
      "Rule alpha=0.05 against rule current, on the same simulated quarters",
      "By team (rule current)",
      "By metric family (rule current)",
      "Planned tests",
      "Priors of true effects",
      "winner's curse of the shipped set",
    ])
      expect(page, section).toContain(section);
    for (const key of ["express-pay", "typo-search", "bundles"]) expect(page).toContain(`<th>${key}</th>`);
  });

  it("carries the fitted prior's uncertainty with --prior-draws bootstrap", async () => {
    const args = ["forecast", "--workspace", "Larkspur Outfitters", "--sims", "500", "--json"];
    const result = await cli([...args, "--prior-draws", "bootstrap", "--bootstrap", "30"]);
    expect(result.code).toBe(0);
    const report = result.json();
    expect(report.priors[0]).toMatchObject({ family: "conversion", bootstrapReplicates: 30 });
    expect(report.cautions.join(" ")).toMatch(/drawn from bootstrap refits/);
    const fixed = (await cli(args)).json();
    expect(fixed.priors[0].bootstrapReplicates).toBe(0);
    expect(fixed.cautions.join(" ")).toMatch(/not carried into these ranges/);
  });

  it("says what is missing when a family has too little history", async () => {
    const backlogFile = file(
      "backlog-2.csv",
      ["key,name,metric,standard_error", "basket-only,Basket change,basket_value,0.01"].join("\n"),
    );
    await cli(["backlog", "import", "--workspace", "Larkspur Outfitters", backlogFile]);
    const result = await cli(["forecast", "--workspace", "Larkspur Outfitters", "--sims", "100"]);
    expect(result.code).toBe(1);
    expect(result.io.stderr.join("\n")).toMatch(/too little history to fit a prior for revenue/);
    const withFallback = await cli([
      "forecast",
      "--workspace",
      "Larkspur Outfitters",
      "--sims",
      "100",
      "--win-rate",
      "0.1",
      "--effect-scale",
      "0.02",
      "--json",
    ]);
    expect(withFallback.code).toBe(0);
    expect(
      withFallback
        .json()
        .priors.map((prior: { source: string }) => prior.source)
        .sort(),
    ).toEqual(["assumed", "fitted"]);
  });
});

import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterEach, beforeEach, describe, expect, it } from "vitest";
import { memoryIo } from "../../src/cli/io.ts";
import { main } from "../../src/cli/main.ts";
import { createDb } from "../../src/db/client.ts";
import { workspaces } from "../../src/db/schema.ts";
import { countsRow, toCsv } from "./import-helpers.ts";

let folder: string;
let previousUrl: string | undefined;
beforeEach(async () => {
  folder = mkdtempSync(join(tmpdir(), "plumbline-cli-import-"));
  previousUrl = process.env["PLUMBLINE_DATABASE_URL"];
  process.env["PLUMBLINE_DATABASE_URL"] = `file:${join(folder, "cli.db")}`;
  const handle = await createDb(process.env["PLUMBLINE_DATABASE_URL"]);
  await handle.db.insert(workspaces).values({ name: "northwind-trial" });
  handle.close();
});
afterEach(() => {
  if (previousUrl === undefined) delete process.env["PLUMBLINE_DATABASE_URL"];
  else process.env["PLUMBLINE_DATABASE_URL"] = previousUrl;
  rmSync(folder, { recursive: true, force: true });
});

function file(name: string, content: string): string {
  const path = join(folder, name);
  writeFileSync(path, content);
  return path;
}

describe("plumbline import and plumbline experiments list", () => {
  it("imports with --json, prints one document, and lists the experiment with its lift, SE and flags", async () => {
    const path = file(
      "history.csv",
      toCsv([
        countsRow({
          stopped_early: "yes",
          control_n: 1000,
          treatment_n: 1200,
          treatment_conversions: 144,
          primary: "yes",
        }),
        {
          experiment: "exp-1",
          metric: "revenue_per_user",
          metric_kind: "continuous",
          lift: "0.5%",
          lift_se: "0.4%",
        },
      ]),
    );
    const io = memoryIo();
    expect(await main(["import", path, "--workspace", "northwind-trial", "--json"], io)).toBe(0);
    expect(io.stdout).toHaveLength(1);
    const report = JSON.parse(io.stdout[0] ?? "");
    expect(report).toMatchObject({ outcome: "applied", created: 2, updated: 0, unchanged: 0, errors: [] });

    const listIo = memoryIo();
    expect(await main(["experiments", "list", "--workspace", "northwind-trial", "--json"], listIo)).toBe(0);
    const listing = JSON.parse(listIo.stdout[0] ?? "");
    expect(listing.count).toBe(1);
    const [experiment] = listing.experiments;
    expect(experiment.flags).toEqual(["sample_ratio_mismatch", "stopped_early"]);
    expect(
      experiment.results.map((result: { metric: string; primary: boolean }) => [
        result.metric,
        result.primary,
      ]),
    ).toEqual([
      ["signup_rate", true],
      ["revenue_per_user", false],
    ]);
    // 100/1000 against 144/1200: y = 0.12/0.1 - 1 = 0.2 (worked by hand).
    expect(experiment.results[0].lift).toBeCloseTo(0.2, 12);
    expect(listing.cautions.join(" ")).toMatch(/statistician's review/);

    const humanIo = memoryIo();
    expect(
      await main(["experiments", "list", "--workspace", "northwind-trial", "--team", "Growth"], humanIo),
    ).toBe(0);
    const text = humanIo.stdout.join("\n");
    expect(text).toMatch(/\* signup_rate\s+lift\s+\+20\.00%\s+SE\s+\d+\.\d\d%/);
    expect(text).toMatch(/\[SRM, stopped early\]/);
    const filtered = memoryIo();
    await main(
      ["experiments", "list", "--workspace", "northwind-trial", "--decision", "pending", "--json"],
      filtered,
    );
    expect(JSON.parse(filtered.stdout[0] ?? "").count).toBe(0);
  });

  it("prints each error as row N, column C and exits non-zero when rejected; dry run writes nothing", async () => {
    const path = file("bad.csv", toCsv([countsRow(), countsRow({ experiment: "exp-2", lift_se: -0.1 })]));
    const io = memoryIo();
    expect(await main(["import", path, "--workspace", "northwind-trial"], io)).toBe(1);
    expect(io.stdout.join("\n")).toMatch(/row 3, column lift_se: must be above 0; got -0.1/);
    const jsonIo = memoryIo();
    expect(await main(["import", path, "--workspace", "northwind-trial", "--json"], jsonIo)).toBe(1);
    expect(JSON.parse(jsonIo.stdout[0] ?? "").errors).toEqual([
      { row: 3, column: "lift_se", message: "must be above 0; got -0.1" },
    ]);

    const good = file("good.csv", toCsv([countsRow()]));
    const dryIo = memoryIo();
    expect(await main(["import", good, "--workspace", "northwind-trial", "--dry-run"], dryIo)).toBe(0);
    expect(dryIo.stdout.join("\n")).toMatch(/nothing written\. An import would give 1 created/);
    const listIo = memoryIo();
    await main(["experiments", "list", "--workspace", "northwind-trial", "--json"], listIo);
    expect(JSON.parse(listIo.stdout[0] ?? "").count).toBe(0);
  });

  it("imports realized measurements with --realized; refuses unknown flags and workspaces", async () => {
    const history = file("history.csv", toCsv([countsRow()]));
    await main(["import", history, "--workspace", "northwind-trial"], memoryIo());
    const realized = file(
      "realized.csv",
      toCsv([
        {
          experiment: "exp-1",
          metric: "signup_rate",
          realized_lift: 0.05,
          realized_se: 0.02,
          method: "holdout",
        },
      ]),
    );
    const io = memoryIo();
    expect(
      await main(["import", realized, "--workspace", "northwind-trial", "--realized", "--json"], io),
    ).toBe(0);
    expect(JSON.parse(io.stdout[0] ?? "").created).toBe(1);
    const unknownFlag = memoryIo();
    expect(await main(["import", realized, "--workspace", "northwind-trial", "--force"], unknownFlag)).toBe(
      2,
    );
    const unknownWorkspace = memoryIo();
    expect(await main(["import", realized, "--workspace", "nobody"], unknownWorkspace)).toBe(1);
    expect(unknownWorkspace.stderr.join("\n")).toMatch(/no workspace named "nobody"/);
  });
});

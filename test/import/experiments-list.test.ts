import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterEach, beforeEach, describe, expect, it } from "vitest";
import { memoryIo } from "../../src/cli/io.ts";
import { main } from "../../src/cli/main.ts";
import { createDb } from "../../src/db/client.ts";
import { workspaces } from "../../src/db/schema.ts";
import { type Cells, countsRow, toCsv } from "./import-helpers.ts";

let folder: string;
let previousUrl: string | undefined;
beforeEach(async () => {
  folder = mkdtempSync(join(tmpdir(), "plumbline-cli-list-"));
  previousUrl = process.env["PLUMBLINE_DATABASE_URL"];
  process.env["PLUMBLINE_DATABASE_URL"] = `file:${join(folder, "cli.db")}`;
  const handle = await createDb(process.env["PLUMBLINE_DATABASE_URL"]);
  await handle.db.insert(workspaces).values([{ name: "northwind-trial" }, { name: "other-shop" }]);
  handle.close();
});
afterEach(() => {
  if (previousUrl === undefined) delete process.env["PLUMBLINE_DATABASE_URL"];
  else process.env["PLUMBLINE_DATABASE_URL"] = previousUrl;
  rmSync(folder, { recursive: true, force: true });
});

/**
 * Seven experiments: exp-1..exp-6 start on the 1st of January..June 2024, alternate teams and
 * decisions; exp-3 and exp-6 also have a revenue result; exp-0 has no started_on.
 */
async function seed(): Promise<void> {
  const rows: Cells[] = [];
  for (let index = 1; index <= 6; index += 1) {
    const experiment = `exp-${index}`;
    rows.push(
      countsRow({
        experiment,
        team: index % 2 === 0 ? "Checkout" : "Growth",
        decision: index % 3 === 0 ? "not_shipped" : "shipped",
        started_on: `2024-0${index}-01`,
        ended_on: `2024-0${index}-20`,
        primary: "yes",
      }),
    );
    if (index % 3 === 0) {
      rows.push({
        experiment,
        metric: "revenue_per_user",
        metric_kind: "continuous",
        lift: 0.01,
        lift_se: 0.01,
      });
    }
  }
  rows.push(countsRow({ experiment: "exp-0", started_on: "", ended_on: "", primary: "yes" }));
  const path = join(folder, "history.csv");
  writeFileSync(path, toCsv(rows));
  expect(await main(["import", path, "--workspace", "northwind-trial"], memoryIo())).toBe(0);
  // The same experiment keys in another workspace must never show up in this one's listing.
  expect(await main(["import", path, "--workspace", "other-shop"], memoryIo())).toBe(0);
}

async function list(...flags: string[]) {
  const io = memoryIo();
  const code = await main(["experiments", "list", "--workspace", "northwind-trial", "--json", ...flags], io);
  expect(code, io.stderr.join("\n")).toBe(0);
  expect(io.stdout).toHaveLength(1);
  const listing = JSON.parse(io.stdout[0] ?? "") as {
    total: number;
    offset: number;
    limit: number | null;
    count: number;
    experiments: { key: string; results: { metric: string }[] }[];
  };
  return { ...listing, keys: listing.experiments.map((experiment) => experiment.key) };
}

describe("plumbline experiments list: filters and pages", () => {
  it("lists every experiment by start date (no date first), with total and count", async () => {
    await seed();
    const all = await list();
    // SQLite orders NULL before any text, so the experiment without a start date comes first.
    expect(all.keys).toEqual(["exp-0", "exp-1", "exp-2", "exp-3", "exp-4", "exp-5", "exp-6"]);
    expect([all.total, all.count, all.offset, all.limit]).toEqual([7, 7, 0, null]);
  });

  it("--from and --to keep experiments started in the range, both ends included", async () => {
    await seed();
    expect((await list("--from", "2024-02-01", "--to", "2024-04-01")).keys).toEqual([
      "exp-2",
      "exp-3",
      "exp-4",
    ]);
    expect((await list("--from", "2024-05-01")).keys).toEqual(["exp-5", "exp-6"]);
    // exp-0 has no started_on, so it cannot be placed before any day.
    expect((await list("--to", "2024-01-31")).keys).toEqual(["exp-1"]);
    expect((await list("--from", "2024-03-02", "--to", "2024-03-31")).total).toBe(0);
  });

  it("filters combine with team, decision and metric; total counts every match", async () => {
    await seed();
    expect((await list("--team", "Checkout", "--from", "2024-03-01")).keys).toEqual(["exp-4", "exp-6"]);
    const revenue = await list("--metric", "revenue_per_user");
    expect(revenue.keys).toEqual(["exp-3", "exp-6"]);
    // An experiment matched by one metric still shows all its results.
    expect(revenue.experiments[0]?.results.map((result) => result.metric)).toEqual([
      "signup_rate",
      "revenue_per_user",
    ]);
    const paged = await list("--metric", "revenue_per_user", "--limit", "1");
    expect([paged.total, paged.count, paged.keys]).toEqual([2, 1, ["exp-3"]]);
    expect((await list("--decision", "not_shipped", "--to", "2024-04-30")).keys).toEqual(["exp-3"]);
  });

  it("--limit and --offset page through the matches without gaps or repeats", async () => {
    await seed();
    const seen: string[] = [];
    for (let offset = 0; offset < 7; offset += 3) {
      const page = await list("--limit", "3", "--offset", String(offset));
      expect([page.total, page.offset, page.limit]).toEqual([7, offset, 3]);
      seen.push(...page.keys);
    }
    expect(seen).toEqual((await list()).keys);
    expect((await list("--offset", "5")).keys).toEqual(["exp-5", "exp-6"]);
    expect((await list("--offset", "9")).count).toBe(0);

    const text = memoryIo();
    await main(["experiments", "list", "--workspace", "northwind-trial", "--limit", "2"], text);
    expect(text.stdout.join("\n")).toMatch(/Experiments 1 to 2 of 7 \(next page: --offset 2\)/);
  });

  it("refuses bad dates, an empty range and bad page sizes with exit 2, naming the flag", async () => {
    for (const [flags, pattern] of [
      [["--from", "01/02/2024"], /--from: "01\/02\/2024" is not a date written YYYY-MM-DD/],
      [["--to", "2024-02-30"], /--to: "2024-02-30" is not a day of the calendar/],
      [["--from", "2024-03-01", "--to", "2024-02-01"], /--to 2024-02-01 is before --from 2024-03-01/],
      [["--limit", "0"], /--limit must be a whole number of at least 1; got "0"/],
      [["--offset=-1"], /--offset must be a whole number of at least 0/],
      [["--limit", "ten"], /--limit must be a whole number/],
    ] as const) {
      const io = memoryIo();
      expect(await main(["experiments", "list", "--workspace", "northwind-trial", ...flags], io)).toBe(2);
      expect(io.stderr.join("\n")).toMatch(pattern);
    }
  });
});

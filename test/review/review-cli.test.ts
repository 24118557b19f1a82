/** `plumbline review` and `plumbline reviews` in process, on a temporary database. */
import { mkdtempSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { memoryIo } from "../../src/cli/io.ts";
import { main } from "../../src/cli/main.ts";
import { createDb } from "../../src/db/client.ts";
import { generateDemo } from "../../src/demo/generate-demo.ts";
import { seedHistory } from "./seed-history.ts";

let folder: string;
let savedUrl: string | undefined;

async function cli(...argv: string[]) {
  const io = memoryIo();
  const code = await main(argv, io);
  return { code, stdout: io.stdout, stderr: io.stderr.join("\n") };
}

beforeAll(async () => {
  folder = mkdtempSync(join(tmpdir(), "plumbline-review-cli-"));
  savedUrl = process.env.PLUMBLINE_DATABASE_URL;
  process.env.PLUMBLINE_DATABASE_URL = `file:${join(folder, "cli.db")}`;
  const handle = await createDb(process.env.PLUMBLINE_DATABASE_URL);
  await seedHistory(handle.db, "quillfern", generateDemo({ seed: 8, experiments: 300 }).truth.experiments);
  handle.close();
}, 60_000);

afterAll(() => {
  if (savedUrl === undefined) delete process.env.PLUMBLINE_DATABASE_URL;
  else process.env.PLUMBLINE_DATABASE_URL = savedUrl;
  rmSync(folder, { recursive: true, force: true });
});

describe("plumbline review", () => {
  it("prints one JSON document with the review's keys, and writes HTML and CSV", async () => {
    const html = join(folder, "review.html");
    const csv = join(folder, "review.csv");
    const result = await cli(
      "review",
      "--workspace",
      "quillfern",
      "--family",
      "conversion",
      "--prior-family",
      "skewed",
      "--practical",
      "0.005",
      "--json",
      "--html",
      html,
      "--csv",
      csv,
      "--save",
      "first",
    );
    expect(result.code, result.stderr).toBe(0);
    expect(result.stdout).toHaveLength(1);
    const document = JSON.parse(result.stdout[0] ?? "");
    for (const key of [
      "shipped",
      "expectedRealWins",
      "expectedFalseWins",
      "falseDiscoveryRate",
      "claimedTotalLift",
      "expectedRealizedLift",
      "realizationRatio",
      "exaggerationFactor",
      "winnersCurseBias",
      "missedWins",
      "aa",
      "caliper",
      "assumptions",
      "cautions",
    ]) {
      expect(document, key).toHaveProperty(key);
    }
    expect(document.falseDiscoveryRate).toHaveProperty("interval");
    expect(document.saved.label).toBe("first");
    expect(readFileSync(html, "utf8")).toContain("<svg");
    expect(readFileSync(csv, "utf8").split("\r\n")[0]).toMatch(/^key,name,team/);
  }, 120_000);

  it("answers a second identical request from the cache", async () => {
    const result = await cli(
      "review",
      "--workspace",
      "quillfern",
      "--family",
      "conversion",
      "--prior-family",
      "skewed",
      "--practical",
      "0.005",
      "--json",
    );
    expect(JSON.parse(result.stdout[0] ?? "").cached).toBe(true);
  });

  it("refuses unknown flags and bad values with exit 2", async () => {
    expect((await cli("review", "--workspace", "quillfern", "--colour", "red")).code).toBe(2);
    expect((await cli("review", "--workspace", "quillfern", "--quarter", "2026Q9")).code).toBe(2);
    expect((await cli("review", "--workspace", "quillfern", "--alpha", "abc")).code).toBe(2);
    expect((await cli("review")).code).toBe(2);
    expect((await cli("review", "--workspace", "nobody")).code).toBe(1);
  }, 60_000);
});

describe("plumbline reviews", () => {
  it("lists, shows and compares saved reviews; labels are never overwritten", async () => {
    const second = await cli(
      "review",
      "--workspace",
      "quillfern",
      "--family",
      "conversion",
      "--prior-family",
      "skewed",
      "--delta",
      "0.002",
      "--save",
      "second",
    );
    expect(second.code, second.stderr).toBe(0);
    expect(
      (
        await cli(
          "review",
          "--workspace",
          "quillfern",
          "--family",
          "conversion",
          "--prior-family",
          "skewed",
          "--save",
          "second",
        )
      ).code,
    ).toBe(1);
    const listed = JSON.parse(
      (await cli("reviews", "list", "--workspace", "quillfern", "--json")).stdout[0] ?? "",
    );
    expect(listed.reviews.map((row: { label: string }) => row.label)).toEqual(["second", "first"]);
    const shown = JSON.parse(
      (await cli("reviews", "show", "first", "--workspace", "quillfern", "--json")).stdout[0] ?? "",
    );
    expect(shown.label).toBe("first");
    expect(shown.cautions.length).toBe(3);
    const compared = JSON.parse(
      (await cli("reviews", "compare", "first", "second", "--workspace", "quillfern", "--json")).stdout[0] ??
        "",
    );
    expect(compared.sameData).toBe(true);
    expect(compared.settingsChanged).toContain("delta");
    expect((await cli("reviews", "show", "missing", "--workspace", "quillfern")).code).toBe(1);
    expect((await cli("reviews", "compare", "first", "--workspace", "quillfern")).code).toBe(2);
  }, 120_000);
});

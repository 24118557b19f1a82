/** `plumbline fit FILE.csv` in process (invented results). */
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, describe, expect, it } from "vitest";
import { memoryIo } from "../../src/cli/io.ts";
import { main } from "../../src/cli/main.ts";
import { createRandom } from "../../src/stats/random.ts";

const folder = mkdtempSync(join(tmpdir(), "plumbline-fit-cli-"));
afterAll(() => rmSync(folder, { recursive: true, force: true }));

function writeResults(name: string, header: string, count: number): string {
  const random = createRandom(99);
  const lines = [header];
  for (let i = 0; i < count; i++) {
    const s = 0.005 + 0.02 * random.uniform();
    const theta = random.uniform() < 0.7 ? 0 : 0.02 * random.normal();
    lines.push(`${theta + s * random.normal()},${s}`);
  }
  const path = join(folder, name);
  writeFileSync(path, `${lines.join("\n")}\n`);
  return path;
}

describe("plumbline fit", () => {
  it("prints one JSON document with the keys of issue 4 and writes the posteriors", async () => {
    const input = writeResults("lift-se.csv", "lift,se", 300);
    const output = join(folder, "posteriors.csv");
    const io = memoryIo();
    const code = await main(
      [
        "fit",
        input,
        "--family",
        "skewed",
        "--bootstrap",
        "20",
        "--seed",
        "4",
        "--posteriors",
        output,
        "--json",
      ],
      io,
    );
    expect(code, io.stderr.join("\n")).toBe(0);
    expect(io.stdout).toHaveLength(1);
    const document = JSON.parse(io.stdout[0] as string);
    for (const key of [
      "family",
      "components",
      "nullWeight",
      "logLik",
      "iterations",
      "converged",
      "optimalityGap",
      "summary",
      "intervals",
    ])
      expect(document).toHaveProperty(key);
    expect(document.family).toBe("skewed");
    expect(document.summary).toHaveProperty("nullShare");
    expect(document.summary).toHaveProperty("winRate");
    expect(document.intervals.winRate.lower).toBeLessThanOrEqual(document.intervals.winRate.upper);
    const rows = readFileSync(output, "utf8").trim().split("\n");
    expect(rows[0]).toBe(
      "posterior_mean,posterior_sd,lower,upper,prob_positive,prob_null,prob_negative,lfsr",
    );
    expect(rows).toHaveLength(301);
  });

  it("reads y,s columns too and names every bad row and column", async () => {
    const good = writeResults("y-s.csv", "y,s", 50);
    const io = memoryIo();
    expect(await main(["fit", good, "--json"], io)).toBe(0);
    const bad = join(folder, "bad.csv");
    writeFileSync(bad, "lift,se\n0.01,0.005\nabc,0.004\n0.02,-1\n");
    const badIo = memoryIo();
    expect(await main(["fit", bad, "--json"], badIo)).toBe(1);
    const error = JSON.parse(badIo.stdout[0] as string).error;
    expect(error.issues).toEqual([
      { row: 3, column: "lift", message: 'must be a finite number; got "abc"' },
      { row: 4, column: "se", message: 'must be a positive finite number; got "-1"' },
    ]);
  });

  it("rejects unknown flags and bad option values with exit 2", async () => {
    const input = writeResults("flags.csv", "lift,se", 10);
    expect(await main(["fit", input, "--bogus"], memoryIo())).toBe(2);
    expect(await main(["fit", input, "--family", "wide"], memoryIo())).toBe(2);
    expect(await main(["fit", input, "--null-weight", "0.5"], memoryIo())).toBe(2);
  });
});

import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { memoryIo } from "../../src/cli/io.ts";
import { main } from "../../src/cli/main.ts";
import { createDb } from "../../src/db/client.ts";
import { seedCalibrationHistory } from "../helpers/calibration-history.ts";

const economicsFlags = [
  "--baseline",
  "0.05",
  "--daily-traffic",
  "40000",
  "--period-days",
  "90",
  "--backlog",
  "30",
  "--value-per-lift",
  "5e6",
  "--launch-cost",
  "2000",
];

let folder: string;
let previousUrl: string | undefined;

beforeAll(async () => {
  folder = mkdtempSync(join(tmpdir(), "plumbline-calibrate-"));
  const url = `file:${join(folder, "cli.db")}`;
  const handle = await createDb(url);
  await seedCalibrationHistory(handle.db, "lumen-books");
  handle.close();
  previousUrl = process.env.PLUMBLINE_DATABASE_URL;
  process.env.PLUMBLINE_DATABASE_URL = url;
});
afterAll(() => {
  if (previousUrl === undefined) delete process.env.PLUMBLINE_DATABASE_URL;
  else process.env.PLUMBLINE_DATABASE_URL = previousUrl;
  rmSync(folder, { recursive: true, force: true });
});

describe("plumbline calibrate", () => {
  it("prints one JSON document with the keys of issue 6 for an assumed prior", async () => {
    const io = memoryIo();
    const code = await main(
      [
        "calibrate",
        "--win-rate",
        "0.1",
        "--effect-scale",
        "0.02",
        "--prior-shape",
        "normal",
        "--mde",
        "0.03",
        ...economicsFlags,
        "--json",
      ],
      io,
    );
    expect(code).toBe(0);
    expect(io.stdout).toHaveLength(1);
    const report = JSON.parse(io.stdout[0]!);
    for (const key of [
      "alpha",
      "threshold",
      "nPerArm",
      "days",
      "testsPerPeriod",
      "power",
      "falsePositiveRisk",
      "exaggeration",
      "expectedValue",
    ]) {
      expect(report.recommended).toHaveProperty(key);
      expect(report.textbook).toHaveProperty(key);
    }
    expect(report.textbook.alpha).toBeCloseTo(0.05, 12);
    expect(report.textbook.power).toBeCloseTo(0.8, 12);
    expect(report.current).toBeNull();
    expect(report.recommended.expectedValue).toBeGreaterThanOrEqual(report.textbook.expectedValue);
    expect(report.curves.valueVsAlpha.length).toBeGreaterThan(10);
    expect(report.curves.valueVsN.length).toBeGreaterThan(10);
    // The operating curve with the recommended and textbook points (current: none without history).
    expect(report.curves.operatingCurves.map((curve: { design: string }) => curve.design)).toEqual([
      "recommended",
      "textbook",
    ]);
    expect(report.sensitivity.scenarios).toHaveLength(4);
    expect(report.cautions.join(" ")).toMatch(/statistician/);
  });

  it("fits the prior of a workspace's metric family and compares with its current defaults", async () => {
    const io = memoryIo();
    const code = await main(
      ["calibrate", "--workspace", "lumen-books", "--family", "signup", ...economicsFlags, "--json"],
      io,
    );
    expect(code).toBe(0);
    const report = JSON.parse(io.stdout[0]!);
    expect(report.prior.source).toBe("fitted");
    expect(report.current.nPerArm).toBe(15_000);
    expect(report.curves.operatingCurves.map((curve: { design: string }) => curve.design)).toEqual([
      "recommended",
      "textbook",
      "current",
    ]);
    const text = memoryIo();
    expect(
      await main(["calibrate", "--workspace", "lumen-books", "--family", "signup", ...economicsFlags], text),
    ).toBe(0);
    expect(text.stdout.join("\n")).toMatch(/Operating points[\s\S]*recommended[\s\S]*textbook[\s\S]*current/);
  });

  it("test-and-roll mode gives Feit & Berman's 2,284 per arm", async () => {
    const io = memoryIo();
    const code = await main(
      [
        "calibrate",
        "--population",
        "100000",
        "--prior-mean",
        "0.68",
        "--prior-sd",
        "0.03",
        "--response-sd",
        String(Math.sqrt(0.68 * 0.32)),
        "--json",
      ],
      io,
    );
    expect(code).toBe(0);
    const plan = JSON.parse(io.stdout[0]!);
    expect(plan.nPerArm).toBe(2284);
    for (const key of ["expectedProfit", "regret", "errorRate"]) expect(plan).toHaveProperty(key);
  });

  it("refuses an unknown flag or a missing input with exit code 2", async () => {
    const unknown = memoryIo();
    expect(await main(["calibrate", "--bogus"], unknown)).toBe(2);
    const missing = memoryIo();
    expect(await main(["calibrate", "--win-rate", "0.1", "--effect-scale", "0.02", "--json"], missing)).toBe(
      2,
    );
    expect(missing.stderr.join("\n")).toMatch(/--baseline/);
  });

  it("names the flag and the condition of every refusal, in both modes", async () => {
    const economics = ["--daily-traffic", "50000", "--period-days", "90", "--backlog", "60"];
    const value = ["--value-per-lift", "2e7", "--launch-cost", "5000"];
    const refusal = async (args: string[]) => {
      const io = memoryIo();
      expect(await main(["calibrate", ...args], io)).toBe(2);
      return io.stderr.join("\n");
    };
    const assumed = ["--win-rate", "0.2", "--effect-scale", "0.01"];
    expect(await refusal([...assumed, "--baseline", "1.5", ...economics, ...value])).toContain(
      "--baseline must be strictly between 0 and 1; got 1.5",
    );
    expect(
      await refusal([
        "--win-rate",
        "0.7",
        "--effect-scale",
        "0.01",
        "--baseline",
        "0.05",
        ...economics,
        ...value,
      ]),
    ).toContain("--win-rate + --loss-rate must be at most 1");
    expect(
      await refusal([...assumed, "--baseline", "0.05", ...economics, ...value, "--max-days", "1e-4"]),
    ).toContain("--max-days x --daily-traffic / --arms");
    expect(
      await refusal([...assumed, "--baseline", "0.05", ...economics, ...value, "--prior-sd", "1"]),
    ).toContain("--prior-sd not used with the defaults mode");
    const roll = ["--population", "1e5", "--prior-mean", "0.68", "--response-sd", "0.47"];
    expect(await refusal([...roll, "--prior-sd", "0.03,0"])).toContain(
      "--prior-sd (second value) must be a positive finite number; got 0",
    );
    expect(await refusal([...roll, "--prior-sd", "0.03", "--baseline", "0.05"])).toContain(
      "--baseline not used with --population",
    );
  });
});

describe("plumbline skew-check", () => {
  it("prints the false-positive rate and power as JSON, reproducibly with a seed", async () => {
    const args = [
      "skew-check",
      "--payer-share",
      "0.05",
      "--log-mean",
      "3",
      "--log-sd",
      "2",
      "--n",
      "100",
      "--sims",
      "500",
      "--seed",
      "3",
      "--json",
    ];
    const first = memoryIo();
    const second = memoryIo();
    expect(await main(args, first)).toBe(0);
    expect(await main(args, second)).toBe(0);
    expect(first.stdout).toEqual(second.stdout);
    const result = JSON.parse(first.stdout[0]!);
    expect(result).toHaveProperty("falsePositiveRate");
    expect(result).toHaveProperty("power");
    expect(result.seed).toBe(3);
  });
  it("refusals name the flags", async () => {
    const refusal = async (extra: string[]) => {
      const io = memoryIo();
      const args = ["skew-check", "--payer-share", "0.05", "--log-mean", "3", "--log-sd", "2", ...extra];
      expect(await main(args, io)).toBe(2);
      return io.stderr.join("\n");
    };
    expect(await refusal(["--n", "1.5"])).toContain("--n must be an integer of at least 2; got 1.5");
    expect(await refusal(["--n", "100", "--sims", "5"])).toContain(
      "--sims must be an integer of at least 10",
    );
    expect(await refusal(["--n", "100", "--lift=-2"])).toContain("--lift must be above -1");
    expect(await refusal([])).toContain("--n is required");
  });
});

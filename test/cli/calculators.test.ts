/**
 * The calculator commands end to end in process: `plumbline risk | design | size`, --json and
 * text output, assumptions and cautions, and the exit codes of bad input.
 */
import { describe, expect, it } from "vitest";
import { memoryIo } from "../../src/cli/io.ts";
import { main } from "../../src/cli/main.ts";
import { expectClose } from "../stats/tolerance.ts";

async function runJson(args: string[]): Promise<Record<string, unknown>> {
  const io = memoryIo();
  const code = await main([...args, "--json"], io);
  expect(code, io.stderr.join("\n")).toBe(0);
  expect(io.stdout).toHaveLength(1);
  return JSON.parse(io.stdout[0] as string) as Record<string, unknown>;
}

async function runText(args: string[]): Promise<{ code: number; out: string; err: string }> {
  const io = memoryIo();
  const code = await main(args, io);
  return { code, out: io.stdout.join("\n"), err: io.stderr.join("\n") };
}

const percentTolerance = { absolute: 0.0005 };

describe("plumbline risk", () => {
  it("Kohavi, Deng & Vermeer (2022): win rate 10 %, alpha 0.05, power 0.8 -> false positive risk 22.0 %", async () => {
    const body = await runJson(["risk", "--win-rate", "0.1", "--alpha", "0.05", "--power", "0.8"]);
    expectClose(
      "falsePositiveRisk",
      { winRate: 0.1 },
      body.falsePositiveRisk as number,
      0.22,
      percentTolerance,
    );
    for (const key of [
      "errorGivenRejection",
      "errorGivenNoRejection",
      "confusion",
      "assumptions",
      "cautions",
    ]) {
      expect(body).toHaveProperty(key);
    }
  });
  it("Colquhoun (2014): 1,000 tests at prior 0.1 -> 80 true and 45 false positives", async () => {
    const body = await runJson([
      "risk",
      "--win-rate",
      "0.1",
      "--alpha",
      "0.05",
      "--power",
      "0.8",
      "--tests",
      "1000",
    ]);
    const confusion = body.confusion as Record<string, number>;
    expectClose("truePositives", {}, confusion.truePositives as number, 80, { absolute: 1e-9 });
    expectClose("falsePositives", {}, confusion.falsePositives as number, 45, { absolute: 1e-9 });
  });
  it("text output states the assumptions and the cautions", async () => {
    const { code, out } = await runText(["risk", "--win-rate", "0.5", "--alpha", "0.05", "--power", "0.8"]);
    expect(code).toBe(0);
    expect(out).toMatch(/Error given a rejection.*5\.9 %/);
    expect(out).toMatch(/Error given no rejection: +17\.4 %/);
    expect(out).toContain("Assumptions:");
    expect(out).toContain("does not replace a statistician's review");
    expect(out).toContain("not for clinical or safety-critical decisions");
  });
  it("bad input exits 2 with a message naming the flag", async () => {
    const outOfRange = await runText(["risk", "--win-rate", "1.5", "--alpha", "0.05", "--power", "0.8"]);
    expect(outOfRange.code).toBe(2);
    expect(outOfRange.err).toContain("--win-rate must be strictly between 0 and 1");
    const missing = await runText(["risk", "--alpha", "0.05", "--power", "0.8"]);
    expect(missing.code).toBe(2);
    expect(missing.err).toContain("--win-rate is required");
    const unknown = await runText(["risk", "--win-rat", "0.1"]);
    expect(unknown.code).toBe(2);
    const notNumber = await runText(["risk", "--win-rate", "ten", "--alpha", "0.05", "--power", "0.8"]);
    expect(notNumber.err).toContain("--win-rate must be a number");
  });
});

describe("plumbline design", () => {
  it("Gelman & Carlin (2014): D = 2, s = 8.1 -> power 0.06, Type S 24 %, exaggeration ~9.6", async () => {
    const body = await runJson(["design", "--effect", "2", "--se", "8.1"]);
    expectClose("power", {}, body.power as number, 0.06, { absolute: 0.005 });
    expectClose("typeS", {}, body.typeS as number, 0.24, { absolute: 0.005 });
    expectClose("exaggeration", {}, body.exaggeration as number, 9.6, { relative: 0.02 });
    expect(body.cautions).toBeInstanceOf(Array);
  });
  it("a t reference with --df, and a negative effect", async () => {
    const normal = await runJson(["design", "--effect=-2", "--se", "8.1"]);
    const t = await runJson(["design", "--effect", "2", "--se", "8.1", "--df", "10"]);
    expect(t.reference).toBe("studentT");
    expect(t.exaggeration as number).toBeGreaterThan(normal.exaggeration as number);
  });
  it("inverse: the effect with 80 % power at SE 0.01 is 2.80 SE", async () => {
    const body = await runJson(["design", "--power", "0.8", "--se", "0.01"]);
    expectClose("effect", {}, body.effect as number, 0.028016, { relative: 1e-4 });
    expectClose("exaggeration at 80 % power", {}, body.exaggeration as number, 1.12, { relative: 0.01 });
  });
  it("the operating curve: at alpha 0.05 a null ships 2.5 % of the time and a 2.8 SE win 80 % (Gelman & Carlin 2014)", async () => {
    const body = await runJson(["design", "--effect", "0.028", "--se", "0.01"]);
    const curve = body.operatingCurve as {
      points: { nullShipped: number; winsShipped: number }[];
      area: number;
      atConventionalAlphas: { alpha: number; nullShipped: number; winsShipped: number }[];
    };
    const conventional = curve.atConventionalAlphas.find((point) => point.alpha === 0.05)!;
    expectClose("nullShipped at alpha 0.05", {}, conventional.nullShipped, 0.025, { relative: 1e-15 });
    expectClose("winsShipped at alpha 0.05", {}, conventional.winsShipped, 0.8, { absolute: 0.005 });
    expectClose(
      "winsShipped = right-sign power",
      {},
      conventional.winsShipped,
      body.powerRightSign as number,
      {
        relative: 1e-12,
      },
    );
    // Hanley & McNeil (1982): the binormal ROC area Phi(lambda / sqrt 2) = Phi(1.98) = 0.9761.
    expectClose("area", {}, curve.area, 0.9761, { absolute: 5e-5 });
    expect(curve.points.at(0)).toMatchObject({ nullShipped: 0, winsShipped: 0 });
    expect(curve.points.at(-1)).toMatchObject({ nullShipped: 1, winsShipped: 1 });
    const text = await runText(["design", "--power", "0.8"]);
    expect(text.out).toMatch(/Operating curve/);
    expect(text.out).toMatch(/0\.05 +1\.960 +2\.5 % +80\.0 %/);
  });
  it("non-positive SE and power <= alpha are refused", async () => {
    const zero = await runText(["design", "--effect", "1", "--se", "0"]);
    expect(zero.code).toBe(2);
    expect(zero.err).toContain("--se must be a positive");
    const weak = await runText(["design", "--power", "0.04"]);
    expect(weak.code).toBe(2);
    expect(weak.err).toContain("--power must be above alpha");
  });
});

describe("plumbline size", () => {
  it("continuous metric: Cohen (1988) d = 0.5 -> 64 per arm", async () => {
    const body = await runJson(["size", "--sd", "1", "--delta", "0.5"]);
    expect(body.nPerArm).toBe(64);
    expect(body.totalN).toBe(128);
    expect(body).not.toHaveProperty("days");
  });
  it("R: power.t.test(power = .90, delta = 1) -> n = 22.02110", async () => {
    const body = await runJson(["size", "--sd", "1", "--delta", "1", "--power", "0.9"]);
    expectClose("exactNPerArm", {}, body.exactNPerArm as number, 22.0211, { absolute: 5e-6 });
    expect(body.nPerArm).toBe(23);
  });
  it("conversion metric with --n: R power.prop.test(n = 50, p1 = .5, p2 = .75) -> 0.7401659", async () => {
    const body = await runJson(["size", "--baseline", "0.5", "--mde", "0.5", "--n", "50"]);
    expectClose("power", {}, body.power as number, 0.7401659, { absolute: 5e-8 });
  });
  it("conversion metric: days from daily traffic, k arms, variance reduction", async () => {
    const body = await runJson([
      "size",
      "--baseline",
      "0.05",
      "--mde",
      "0.1",
      "--arms",
      "3",
      "--variance-reduction",
      "0.5",
      "--daily-traffic",
      "20000",
    ]);
    expect(body.alphaPerComparison).toBe(0.025);
    expect(body.varianceFactor).toBe(0.75);
    expect(body.totalN).toBe(3 * (body.nPerArm as number));
    expect(body.days).toBe(Math.ceil((body.totalN as number) / 20000));
  });
  it("minimum detectable effect from --n and --power", async () => {
    const body = await runJson(["size", "--sd", "1", "--n", "20", "--power", "0.8689528016924959"]);
    const mde = body.minimumDetectableEffect as { absolute: number };
    expectClose("MDE (R power.t.test example read backwards)", {}, mde.absolute, 1, { relative: 1e-8 });
  });
  it("refusals name the flags to give", async () => {
    const none = await runText(["size", "--alpha", "0.05"]);
    expect(none.code).toBe(2);
    expect(none.err).toContain("give --baseline RATE (conversion metric) or --sd SD (continuous metric)");
    const noEffect = await runText(["size", "--baseline", "0.05"]);
    expect(noEffect.code).toBe(2);
    expect(noEffect.err).toContain("--mde, --mde-absolute or --delta");
    const beyond = await runText(["size", "--baseline", "0.6", "--mde", "1"]);
    expect(beyond.code).toBe(2);
    expect(beyond.err).toContain(
      "the treatment rate (--baseline plus the effect) must be strictly between 0 and 1",
    );
    const rho = await runText(["size", "--baseline", "0.05", "--mde", "0.1", "--variance-reduction", "1"]);
    expect(rho.err).toContain("--variance-reduction must be strictly between -1 and 1");
  });
  it("text output and refusals", async () => {
    const text = await runText(["size", "--baseline", "0.05", "--mde", "0.1", "--daily-traffic", "5000"]);
    expect(text.code).toBe(0);
    expect(text.out).toContain("Run length:");
    expect(text.out).toContain("Cautions:");
    const both = await runText(["size", "--baseline", "0.05", "--sd", "1", "--mde", "0.1"]);
    expect(both.code).toBe(2);
    const badBaseline = await runText(["size", "--baseline", "1.2", "--mde", "0.1"]);
    expect(badBaseline.code).toBe(2);
    expect(badBaseline.err).toContain("--baseline must be strictly between 0 and 1");
    const smallN = await runText(["size", "--sd", "1", "--delta", "1", "--n", "1"]);
    expect(smallN.code).toBe(2);
    expect(smallN.err).toContain("--n must be at least 2");
  });
});

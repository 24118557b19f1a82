import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { designAnalysis, designAtPower, effectForPower } from "../../src/stats/design-analysis.ts";
import { StatsInputError } from "../../src/stats/errors.ts";
import { readCalculatorFixture } from "./fixture.ts";
import { expectClose } from "./tolerance.ts";

interface DesignCase {
  readonly effect: number;
  readonly standardError: number;
  readonly alpha: number;
  readonly df: number | null;
  readonly power: number;
  readonly typeS: number;
  readonly exaggeration: number;
}

// R integrate() is asked for 1e-13 relative; pnorm/pt agree with ours to ~1e-14.
const powerTolerance = { relative: 1e-12 };
const typeSTolerance = { relative: 1e-11 };
const exaggerationTolerance = { relative: 1e-10 };

describe("designAnalysis against R (closed form vs numerical integration)", () => {
  const fixture = readCalculatorFixture<DesignCase>("design-analysis");
  it("power, Type S and exaggeration, normal and t references", () => {
    for (const example of fixture.cases) {
      const inputs = {
        effect: example.effect,
        standardError: example.standardError,
        alpha: example.alpha,
        ...(example.df === null ? {} : { df: example.df }),
      };
      const result = designAnalysis(inputs);
      expectClose("power", inputs, result.power, example.power, powerTolerance);
      expectClose("typeS", inputs, result.typeS, example.typeS, typeSTolerance);
      expectClose("exaggeration", inputs, result.exaggeration, example.exaggeration, exaggerationTolerance);
    }
  });
});

describe("designAnalysis: Gelman & Carlin (2014) worked examples", () => {
  // Gelman & Carlin (2014), "Beyond Power Calculations", Perspect. Psychol. Sci. 9:641.
  it("D = 2.8, s = 1: power 0.80, exaggeration 1.12", () => {
    const inputs = { effect: 2.8, standardError: 1 };
    const result = designAnalysis(inputs);
    expectClose("power", inputs, result.power, 0.8, { absolute: 0.005 });
    // The paper's 1.12 comes from simulation; the closed form gives 1.1252 (1 % allowance).
    expectClose("exaggeration", inputs, result.exaggeration, 1.12, { relative: 0.01 });
  });
  it("D = 0.1, s = 3.28 (beauty and sex ratio): Type S 46 %, exaggeration about 77", () => {
    const inputs = { effect: 0.1, standardError: 3.28 };
    const result = designAnalysis(inputs);
    expectClose("typeS", inputs, result.typeS, 0.46, { absolute: 0.005 });
    expectClose("exaggeration", inputs, result.exaggeration, 77, { relative: 0.01 });
  });
  it("D = 2, s = 8.1 (ovulation and voting): power 0.06, Type S 24 %, exaggeration 9.5-9.7", () => {
    const inputs = { effect: 2, standardError: 8.1 };
    const result = designAnalysis(inputs);
    expectClose("power", inputs, result.power, 0.06, { absolute: 0.005 });
    expectClose("typeS", inputs, result.typeS, 0.24, { absolute: 0.005 });
    // The paper simulated; 2 % either side of 9.6 (statistics.md section 3).
    expectClose("exaggeration", inputs, result.exaggeration, 9.6, { relative: 0.02 });
  });
});

describe("inverse questions", () => {
  it("80 % power needs a true effect of 2.80 standard errors (z_0.975 + z_0.8, common practice)", () => {
    const inputs = { power: 0.8, standardError: 0.01 };
    // 1.959964 + 0.841621 = 2.801585 (the wrong-sign tail adds ~1e-6 of power, hence the tolerance).
    expectClose("effectForPower", inputs, effectForPower(inputs), 0.028015852, { relative: 1e-5 });
    const back = designAnalysis({ effect: effectForPower(inputs), standardError: 0.01 });
    expectClose("power at effectForPower", inputs, back.power, 0.8, { relative: 1e-12 });
  });
  it("exaggeration expected at 80 % power is about 1.12 (Gelman & Carlin 2014)", () => {
    const result = designAtPower({ power: 0.8 });
    expectClose("exaggeration at power 0.8", { power: 0.8 }, result.exaggeration, 1.12, { absolute: 0.01 });
  });
  it("rejects power at or below alpha", () => {
    expect(() => designAtPower({ power: 0.05 })).toThrow(/power must be above alpha/);
    expect(() => effectForPower({ power: 0.8, standardError: 0 })).toThrow(StatsInputError);
  });
});

describe("typed input errors", () => {
  it("names the parameter", () => {
    expect(() => designAnalysis({ effect: 1, standardError: 0 })).toThrow(/standardError must be a positive/);
    expect(() => designAnalysis({ effect: 1, standardError: 1, alpha: 0 })).toThrow(
      /alpha must be strictly between/,
    );
    expect(() => designAnalysis({ effect: 0, standardError: 1 })).toThrow(/effect must be a non-zero/);
    expect(() => designAnalysis({ effect: 1, standardError: 1, df: 1 })).toThrow(
      /df must be a number above 1/,
    );
  });
});

describe("properties (fast-check)", () => {
  const lambda = fc.double({ min: 0.01, max: 8, noNaN: true });
  const alpha = fc.double({ min: 0.001, max: 0.3, noNaN: true });
  const df = fc.option(fc.double({ min: 2, max: 500, noNaN: true }), { nil: undefined });
  it("probabilities in [0, 1]; exaggeration >= 1; power rises with the effect and with alpha; Type S falls", () => {
    fc.assert(
      fc.property(lambda, alpha, df, (effect, level, degrees) => {
        const base = designAnalysis({ effect, standardError: 1, alpha: level, df: degrees });
        expect(base.power).toBeGreaterThanOrEqual(level * (1 - 1e-9));
        expect(base.power).toBeLessThanOrEqual(1);
        expect(base.typeS).toBeGreaterThanOrEqual(0);
        expect(base.typeS).toBeLessThanOrEqual(0.5);
        expect(base.exaggeration).toBeGreaterThanOrEqual(1 - 1e-12);
        const larger = designAnalysis({ effect: effect * 1.2, standardError: 1, alpha: level, df: degrees });
        expect(larger.power).toBeGreaterThan(base.power);
        expect(larger.typeS).toBeLessThanOrEqual(base.typeS);
        expect(larger.exaggeration).toBeLessThanOrEqual(base.exaggeration + 1e-12);
        const looser = designAnalysis({
          effect,
          standardError: 1,
          alpha: Math.min(0.5, level * 1.5),
          df: degrees,
        });
        expect(looser.power).toBeGreaterThan(base.power);
      }),
    );
  });
  it("exaggeration tends to 1 as power tends to 1", () => {
    const nearlyCertain = designAtPower({ power: 1 - 1e-9 });
    expect(nearlyCertain.exaggeration).toBeLessThan(1.001);
    expect(nearlyCertain.exaggeration).toBeGreaterThanOrEqual(1);
  });
});

/**
 * Properties of the backlog forecast that hold for any prior, SEs and rules (fast-check): real
 * plus false wins make the shipped count; a looser rule ships at least as much in every simulated
 * quarter (common random numbers); quantiles are ordered; probabilities lie in [0, 1]; the input
 * is not mutated; the seed reproduces.
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import type { EffectPrior, PriorComponent } from "../../src/stats/effect-prior.ts";
import { forecastBacklog } from "../../src/stats/forecast-backlog.ts";

const componentArbitrary: fc.Arbitrary<PriorComponent> = fc.oneof(
  fc.constant({ kind: "point", at: 0 } as const),
  fc.record({
    kind: fc.constant("normal" as const),
    mean: fc.double({ min: -0.02, max: 0.02, noNaN: true }),
    scale: fc.double({ min: 0.001, max: 0.05, noNaN: true }),
  }),
  fc
    .tuple(
      fc.double({ min: -0.05, max: 0.05, noNaN: true }),
      fc.double({ min: 0.001, max: 0.05, noNaN: true }),
    )
    .map(([lower, width]) => ({ kind: "uniform" as const, lower, upper: lower + width })),
  fc.record({
    kind: fc.constant("halfT" as const),
    sign: fc.constantFrom(1 as const, -1 as const),
    scale: fc.double({ min: 0.001, max: 0.03, noNaN: true }),
    df: fc.constantFrom(3, 2.5, 8),
  }),
);

const priorArbitrary: fc.Arbitrary<EffectPrior> = fc
  .array(fc.tuple(componentArbitrary, fc.double({ min: 0.01, max: 1, noNaN: true })), {
    minLength: 1,
    maxLength: 4,
  })
  .map((entries) => {
    const total = entries.reduce((sum, [, weight]) => sum + weight, 0);
    return {
      family: "grid",
      components: entries.map(([component, weight]) => ({ component, weight: weight / total })),
    };
  });

const inputArbitrary = fc.record({
  prior: priorArbitrary,
  standardErrors: fc.array(fc.double({ min: 0.002, max: 0.03, noNaN: true }), { minLength: 1, maxLength: 6 }),
  strict: fc.double({ min: 1, max: 3, noNaN: true }),
  loosening: fc.double({ min: 0, max: 1.5, noNaN: true }),
  seed: fc.integer({ min: -1000, max: 1000 }),
});

describe("forecastBacklog properties", () => {
  it("keeps its invariants for any prior, SEs and pair of rules", () => {
    fc.assert(
      fc.property(inputArbitrary, ({ prior, standardErrors, strict, loosening, seed }) => {
        const input = {
          tests: standardErrors.map((standardError, index) => ({
            name: `t${index}`,
            team: index % 2 ? "a" : "b",
            family: "f",
            prior,
            standardError,
          })),
          rules: [
            { label: "strict", criticalValue: strict },
            { label: "loose", criticalValue: strict - loosening },
          ],
          simulations: 200,
          seed,
          target: 0.01,
          expectations: null,
        };
        const frozen = JSON.stringify(input);
        const forecast = forecastBacklog(input);
        expect(JSON.stringify(input)).toBe(frozen);
        for (const rule of forecast.rules) {
          expect(rule.realWins.mean + rule.falseWins.mean).toBeCloseTo(rule.shipped.mean, 10);
          expect(rule.claimedLift.mean - rule.realizedLift.mean).toBeCloseTo(rule.liftGap.mean, 10);
          for (const summary of [rule.shipped, rule.realizedLift, rule.liftGap]) {
            const q = summary.quantiles;
            expect(q.p5 <= q.p25 && q.p25 <= q.p50 && q.p50 <= q.p75 && q.p75 <= q.p95).toBe(true);
          }
          const p = rule.probabilityToReachTarget!.estimate;
          expect(p >= 0 && p <= 1).toBe(true);
          for (const test of rule.tests)
            expect(test.simulatedShipShare >= 0 && test.simulatedShipShare <= 1).toBe(true);
        }
        // The looser rule ships a superset of the stricter one's tests in every quarter.
        const difference = forecast.differences[0]!;
        expect(difference.shipped.quantiles.p5).toBeGreaterThanOrEqual(0);
        expect(forecastBacklog(input)).toEqual(forecast);
      }),
      { numRuns: 60, seed: 20240611 },
    );
  });
});

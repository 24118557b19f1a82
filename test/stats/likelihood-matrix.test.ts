/**
 * The likelihood matrix against marginal likelihoods integrated by scipy (test/fixtures/fit/
 * generate-likelihood.py: quad of the normal density over each uniform, epsrel 1e-13): the
 * linear-space path for points and uniforms (the skewed family), including rows tens of standard
 * errors from every component (log-space fallback), and the same against the log-space kernel on
 * many random rows.
 */
import { describe, expect, it } from "vitest";
import { componentLogLikelihood } from "../../src/stats/component-likelihood.ts";
import type { PriorComponent } from "../../src/stats/effect-prior.ts";
import { likelihoodMatrix } from "../../src/stats/likelihood-matrix.ts";
import { skewedComponents } from "../../src/stats/prior-grid.ts";
import { createRandom } from "../../src/stats/random.ts";
import { readFitFixture } from "./fit-fixture.ts";

interface LikelihoodFixture {
  readonly components: PriorComponent[];
  readonly rows: { y: number; s: number; logLikelihood: number[] }[];
}

// log L to 1e-10 absolute is L to 1e-10 relative: the quadrature reaches ~1e-13, and the cdf
// differences of the narrowest uniform (width 1e-4 against s = 0.02) lose about three digits.
const logTolerance = 1e-10;
// Entries this far below their row's largest do not matter to any fit; rounding may flush them.
const negligibleBelowRowMax = -400;

describe("likelihoodMatrix", () => {
  const fixture = readFitFixture<LikelihoodFixture>("likelihood");

  it("points and uniforms match scipy's integrated likelihoods", () => {
    const y = fixture.rows.map((row) => row.y);
    const s = fixture.rows.map((row) => row.s);
    const matrix = likelihoodMatrix(y, s, fixture.components);
    const columns = fixture.components.length;
    fixture.rows.forEach((row, i) => {
      const rowMax = Math.max(...row.logLikelihood);
      expect(Math.abs((matrix.logRowMax[i] as number) - rowMax)).toBeLessThanOrEqual(logTolerance);
      row.logLikelihood.forEach((expected, k) => {
        if (expected - rowMax < negligibleBelowRowMax) return;
        const actual = Math.log(matrix.values[i * columns + k] as number) + (matrix.logRowMax[i] as number);
        if (!(Math.abs(actual - expected) <= logTolerance))
          throw new Error(
            `y ${row.y}, s ${row.s}, ${JSON.stringify(fixture.components[k])}: log L ${actual}, scipy ${expected}`,
          );
      });
    });
  });

  it("the linear-space path agrees with the log-space kernel on 20,000 random rows", () => {
    const random = createRandom(20261204);
    const count = 20_000;
    const y = new Float64Array(count);
    const s = new Float64Array(count);
    for (let i = 0; i < count; i++) {
      s[i] = 0.001 + 0.05 * random.uniform();
      const kind = random.uniform();
      y[i] = kind < 0.02 ? 2 * random.normal() : kind < 0.05 ? 0.5 * random.normal() : 0.03 * random.normal();
    }
    const components = skewedComponents({ y, s });
    const matrix = likelihoodMatrix(y, s, components);
    const columns = components.length;
    for (let i = 0; i < count; i++) {
      const logs = components.map((component) =>
        componentLogLikelihood(component, y[i] as number, s[i] as number),
      );
      const rowMax = Math.max(...logs);
      for (let k = 0; k < columns; k++) {
        const expected = logs[k] as number;
        if (expected - rowMax < negligibleBelowRowMax) continue;
        const actual = Math.log(matrix.values[i * columns + k] as number) + (matrix.logRowMax[i] as number);
        if (!(Math.abs(actual - expected) <= logTolerance))
          throw new Error(`y ${y[i]}, s ${s[i]}, ${JSON.stringify(components[k])}: ${actual} vs ${expected}`);
      }
    }
  });
});

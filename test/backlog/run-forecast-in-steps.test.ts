/**
 * The stepwise forecast yields to the event loop between steps (so a server keeps serving) and
 * gives exactly the result of the one-go forecast on the same input and seed.
 */
import { describe, expect, it } from "vitest";
import { runForecastInSteps } from "../../src/backlog/run-forecast-in-steps.ts";
import { assumedPrior } from "../../src/stats/assumed-prior.ts";
import { forecastBacklog } from "../../src/stats/forecast-backlog.ts";

describe("runForecastInSteps", () => {
  const prior = assumedPrior({ winRate: 0.15, effectScale: 0.02, shape: "fat" });
  const input = {
    tests: Array.from({ length: 30 }, (_, index) => ({
      name: `idea-${index}`,
      team: index % 2 ? "Search" : "Checkout",
      family: "conversion",
      prior,
      standardError: 0.008 + 0.0002 * index,
    })),
    rules: [{ label: "alpha=0.05", criticalValue: 1.959963984540054 }],
    simulations: 3000,
    seed: 42,
    expectations: null,
  };

  it("lets timers and other work run between steps, reports progress, and matches the one-go result", async () => {
    let timerRanAt = -1;
    const progress: number[] = [];
    setTimeout(() => {
      timerRanAt = progress.length;
    }, 0);
    const stepped = await runForecastInSteps(input, {
      drawsPerStep: 9000,
      onProgress: (completed) => progress.push(completed),
    });
    expect(progress.length).toBe(10);
    expect(progress.at(-1)).toBe(3000);
    // The timer ran while steps were still left.
    expect(timerRanAt).toBeGreaterThanOrEqual(0);
    expect(timerRanAt).toBeLessThan(progress.length);
    expect(stepped).toEqual(forecastBacklog(input));
  });
});

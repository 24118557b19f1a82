/**
 * Runs a backlog forecast in steps, yielding to the event loop between them (setImmediate), so
 * that a server keeps answering other requests during a long simulation and a CLI can show
 * progress. The result is identical to forecastBacklog on the same input: the steps only split
 * the loop over portfolios and the summaries (each a sort of R values) that follow it, the draws
 * are the same. Summary steps are batched up to `sliceMilliseconds` between yields.
 */
import {
  type BacklogForecast,
  type BacklogForecastInput,
  createBacklogSimulation,
} from "../stats/forecast-backlog.ts";

export interface StepOptions {
  /**
   * Draws (portfolios x planned tests x rules) per step; default 50000, about 10-30 ms of work
   * (measured on a shared 2-core machine: 200000 took 50-120 ms).
   */
  readonly drawsPerStep?: number;
  /** Longest run of summary steps between two yields (default 10 ms). */
  readonly sliceMilliseconds?: number;
  readonly onProgress?: (completed: number, total: number) => void;
}

const yieldToEventLoop = () => new Promise<void>((resolve) => setImmediate(resolve));

export async function runForecastInSteps(
  input: BacklogForecastInput,
  options: StepOptions = {},
): Promise<BacklogForecast> {
  const simulation = createBacklogSimulation(input);
  const drawsPerStep = options.drawsPerStep ?? 50_000;
  const perStep = Math.max(
    1,
    Math.floor(drawsPerStep / Math.max(1, input.tests.length * input.rules.length)),
  );
  while (simulation.completed() < simulation.simulations) {
    simulation.advance(perStep);
    options.onProgress?.(simulation.completed(), simulation.simulations);
    await yieldToEventLoop();
  }
  const slice = options.sliceMilliseconds ?? 10;
  const steps = simulation.finishInSteps();
  let sliceStart = performance.now();
  for (;;) {
    const step = steps.next();
    if (step.done) return step.value;
    if (performance.now() - sliceStart >= slice) {
      await yieldToEventLoop();
      sliceStart = performance.now();
    }
  }
}

/**
 * Runs a backlog forecast in steps, yielding to the event loop between them (setImmediate), so
 * that a server keeps answering other requests during a long simulation and a CLI can show
 * progress. The result is identical to forecastBacklog on the same input: the steps only split
 * the loop over portfolios, the draws are the same.
 */
import {
  type BacklogForecast,
  type BacklogForecastInput,
  createBacklogSimulation,
} from "../stats/forecast-backlog.ts";

export interface StepOptions {
  /** Draws (portfolios x planned tests) per step; default 200000, about 10-20 ms of work. */
  readonly drawsPerStep?: number;
  readonly onProgress?: (completed: number, total: number) => void;
}

const yieldToEventLoop = () => new Promise<void>((resolve) => setImmediate(resolve));

export async function runForecastInSteps(
  input: BacklogForecastInput,
  options: StepOptions = {},
): Promise<BacklogForecast> {
  const simulation = createBacklogSimulation(input);
  const drawsPerStep = options.drawsPerStep ?? 200_000;
  const perStep = Math.max(
    1,
    Math.floor(drawsPerStep / Math.max(1, input.tests.length * input.rules.length)),
  );
  while (simulation.completed() < simulation.simulations) {
    simulation.advance(perStep);
    options.onProgress?.(simulation.completed(), simulation.simulations);
    await yieldToEventLoop();
  }
  return simulation.finish();
}

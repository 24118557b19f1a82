/**
 * Empirical-Bayes fit benchmark (issue 4). Data: the recipe of the R mixsqp fixture (70 % nulls,
 * the rest N(0, 0.02^2), SE uniform on [0.005, 0.03]), seeded; symmetric family on its default
 * grid, no null penalty. For N = 1e4, 1e5, 1e6: seconds to build the likelihood matrix and to solve
 * by mix-SQP, iterations, optimality gap (max_k d_k - 1), memory after each step (rss and
 * arrayBuffers, after a forced GC when node runs with --expose-gc), and the plain-EM baseline on
 * the same matrix in the same process (same stopping rule, capped iterations), with the ratio of
 * times. Then posteriors of 1e6 results, on one thread (the baseline) and on two as the fit command
 * and API compute them (src/threads), and 200 warm-started bootstrap refits of 1e4.
 * Targets on a 2-core machine: 1e5 <= 0.3 s; 1e6 <= 5 s under 1 GiB; posteriors 1e6 <= 1 s;
 * 200 refits of 1e4 <= 5 s. Run: npm run bench -- fit   (PLUMBLINE_BENCH_FIT_MAX=100000 to stop early)
 */
import { bootstrapPrior } from "../src/stats/bootstrap-prior.ts";
import type { EffectPrior } from "../src/stats/effect-prior.ts";
import { expectationMaximizationWeights } from "../src/stats/expectation-maximization.ts";
import {
  familyComponents,
  fitEffectPrior,
  type Observation,
  observationColumns,
} from "../src/stats/fit-effect-prior.ts";
import { likelihoodMatrix } from "../src/stats/likelihood-matrix.ts";
import { solveMixtureWeights } from "../src/stats/mix-sqp.ts";
import { posteriorColumns } from "../src/stats/posterior.ts";
import { createRandom } from "../src/stats/random.ts";
import { helperThread } from "../src/threads/helper-thread.ts";
import { posteriorColumnsOnThreads } from "../src/threads/posterior-threads.ts";

const sizes = [10_000, 100_000, 1_000_000].filter(
  (n) => n <= Number(process.env.PLUMBLINE_BENCH_FIT_MAX ?? 1e6),
);
const tolerance = 1e-6;
const repeatsUpTo1e5 = 5;
const emIterationCap: Record<number, number> = { 10000: 5_000, 100000: 1_000, 1000000: 100 };
const mebibyte = 2 ** 20;

function simulate(count: number, seed: number): Observation[] {
  const random = createRandom(seed);
  const observations: Observation[] = [];
  for (let i = 0; i < count; i++) {
    const s = 0.005 + 0.025 * random.uniform();
    const theta = random.uniform() < 0.7 ? 0 : 0.02 * random.normal();
    observations.push({ y: theta + s * random.normal(), s });
  }
  return observations;
}

function memory(): { rssMiB: number; arrayBuffersMiB: number } {
  const usage = process.memoryUsage();
  return {
    rssMiB: Math.round(usage.rss / mebibyte),
    arrayBuffersMiB: Math.round(usage.arrayBuffers / mebibyte),
  };
}

function collect(): void {
  (globalThis as { gc?: () => void }).gc?.();
}

const seconds = (start: number) => Math.round((performance.now() - start) * 1e3) / 1e6;

export async function runFitBench(): Promise<object> {
  const fits: object[] = [];
  let largest: Observation[] = [];
  let largestPrior: ReturnType<typeof fitEffectPrior>["prior"] | undefined;
  for (const count of sizes) {
    collect();
    const before = memory();
    const observations = simulate(count, 20240611 + count);
    const data = observationColumns(observations);
    const components = familyComponents(data, "symmetric");
    const penalty = new Float64Array(components.length);
    // Up to 1e5 the fit is timed several times: the first run of a size in a process pays for
    // compiling and first touches (what a one-off command sees), the median is the steady state of
    // a service that fits again and again. Both are reported; memory is read on the first run.
    const runs = count <= 100_000 ? repeatsUpTo1e5 : 1;
    const timings: { matrixSeconds: number; solveSeconds: number }[] = [];
    const fitOnce = () => {
      const matrixStart = performance.now();
      const matrix = likelihoodMatrix(data.y, data.s, components);
      const matrixSeconds = seconds(matrixStart);
      const afterMatrix = memory();
      const solveStart = performance.now();
      const solution = solveMixtureWeights({ matrix, penalty }, { tolerance });
      timings.push({ matrixSeconds, solveSeconds: seconds(solveStart) });
      return { matrix, solution, afterMatrix, afterSolve: memory() };
    };
    const { matrix, solution, afterMatrix, afterSolve } = fitOnce();
    for (let run = 1; run < runs; run++) {
      collect();
      fitOnce();
    }
    const totals = timings.map((timing) => timing.matrixSeconds + timing.solveSeconds);
    const middle = [...totals.keys()].sort((a, b) => (totals[a] as number) - (totals[b] as number))[
      Math.floor(totals.length / 2)
    ] as number;
    const { matrixSeconds, solveSeconds } = timings[middle] as (typeof timings)[number];
    const firstRunSeconds = Math.round((totals[0] as number) * 1e6) / 1e6;
    const start = performance.now();
    const baseline = expectationMaximizationWeights(
      { matrix, penalty },
      { tolerance, maxIterations: emIterationCap[count] ?? 1000 },
    );
    const emSeconds = seconds(start);
    const total = matrixSeconds + solveSeconds;
    fits.push({
      n: count,
      components: components.length,
      runs,
      matrixSeconds,
      solveSeconds,
      totalSeconds: Math.round(total * 1e6) / 1e6,
      totalSecondsIs: runs > 1 ? `the median of ${runs} runs` : "one run",
      firstRunSeconds,
      iterations: solution.iterations,
      converged: solution.converged,
      optimalityGap: solution.optimalityGap,
      memory: {
        before,
        afterMatrix,
        afterSolve,
        peakRssMiB: Math.max(afterMatrix.rssMiB, afterSolve.rssMiB),
      },
      baselineEm: {
        seconds: emSeconds,
        iterations: baseline.iterations,
        converged: baseline.converged,
        optimalityGap: baseline.optimalityGap,
        iterationCap: emIterationCap[count],
      },
      ratioEmToMixSqp: Math.round((emSeconds / solveSeconds) * 100) / 100,
      target:
        count === 100_000 ? "total <= 0.3 s" : count === 1_000_000 ? "total <= 5 s, peak < 1024 MiB" : null,
    });
    if (count === sizes[sizes.length - 1]) {
      largest = observations;
      largestPrior = fitEffectPrior(observations, {
        family: "symmetric",
        nullWeight: 1,
        initialWeights: solution.weights,
      }).prior;
    }
  }

  let posteriors: object | null = null;
  if (largestPrior) {
    const y = Float64Array.from(largest, (observation) => observation.y);
    const s = Float64Array.from(largest, (observation) => observation.s);
    // One thread first (the baseline); then two threads, first with the helper thread started by
    // the call itself, then with the helper up, as the fit command has it (it starts the helper
    // when it has read a large file, so the helper is up by the time the fit is done).
    const start = performance.now();
    const oneThread = posteriorColumns(largestPrior, y, s, 0.9);
    const oneThreadSeconds = seconds(start);
    const twoThreads = async () => {
      let share = { chunks: 0, byHelper: 0 };
      const started = performance.now();
      const columns = await posteriorColumnsOnThreads(largestPrior as EffectPrior, y, s, 0.9, {
        onShare: (value) => (share = value),
      });
      return { seconds: seconds(started), share, columns };
    };
    await helperThread()?.stop();
    const cold = await twoThreads();
    const warm = await twoThreads();
    const same = (columns: typeof oneThread) =>
      columns.lower.every((value, i) => Object.is(value, oneThread.lower[i])) &&
      columns.mean.every((value, i) => Object.is(value, oneThread.mean[i]));
    posteriors = {
      n: largest.length,
      seconds: warm.seconds,
      what: "two threads, the helper thread up (as in plumbline fit)",
      chunksByHelperThread: `${warm.share.byHelper} of ${warm.share.chunks}`,
      secondsIncludingHelperStart: cold.seconds,
      chunksByHelperThreadIncludingStart: `${cold.share.byHelper} of ${cold.share.chunks}`,
      oneThreadSeconds,
      ratioOneToTwoThreads: Math.round((oneThreadSeconds / warm.seconds) * 100) / 100,
      sameAsOneThread: same(cold.columns) && same(warm.columns),
      firstMean: warm.columns.mean[0],
      priorComponents: largestPrior.components.length,
      target: "1e6 <= 1 s",
    };
  }
  largest = [];
  collect();

  const bootstrapData = simulate(10_000, 7);
  const fullFit = fitEffectPrior(bootstrapData, { family: "symmetric", nullWeight: 1 });
  let progressCalls = 0;
  const start = performance.now();
  const bootstrap = bootstrapPrior(bootstrapData, fullFit, {
    replicates: 200,
    seed: 11,
    onProgress: () => progressCalls++,
  });
  const bootstrapSeconds = seconds(start);

  return {
    method: "mix-SQP (active-set QP, working-set Hessian) on row-normalized Float64Array likelihoods",
    data: "70 % nulls, rest N(0, 0.02^2), s ~ U[0.005, 0.03]; symmetric family, default grid, nullWeight 1",
    tolerance,
    fits,
    posteriors,
    bootstrap: {
      n: 10_000,
      replicates: bootstrap.replicates,
      seconds: bootstrapSeconds,
      convergedRefits: bootstrap.convergedCount,
      secondsPerRefit: Math.round((bootstrapSeconds / 200) * 1e6) / 1e6,
      progressCalls,
      target: "200 refits of 1e4 <= 5 s",
    },
  };
}

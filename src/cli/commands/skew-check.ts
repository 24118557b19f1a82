/**
 * `plumbline skew-check`: does the Welch t-test hold its alpha on a zero-inflated, log-normal
 * metric (revenue per user) at the planned n? A seeded simulation (statistics.md section 9).
 */
import { createRandom } from "../../stats/random.ts";
import { simulateSkewedMetric } from "../../stats/skewed-metric-simulation.ts";
import { type CalculatorCommand, FlagError, notesBlock, runCalculatorCommand } from "../calculator-flags.ts";
import type { CommandIo } from "../io.ts";

export const summary =
  "simulate the Welch t-test's real false-positive rate and power on a skewed revenue metric";

const help = `Usage: plumbline skew-check --payer-share P --log-mean M --log-sd S --n N
                            [--lift REL] [--alpha A] [--sims R] [--seed X] [--json]

  --payer-share P  share of users who pay, in (0, 1]
  --log-mean M     mean of log(spend) of a payer
  --log-sd S       sd of log(spend) of a payer
  --n N            users per arm
  --lift REL       relative lift of the A/B runs, for power (default 0.05)
  --alpha A        two-sided nominal alpha (default 0.05)
  --sims R         simulated runs of each kind, A/A and A/B (default 2000)
  --seed X         seed of the simulation (default 1)
  --json           print one JSON document`;

/** Upper bound on simulated users (runs x users per arm) so that one call stays within seconds. */
export const maximumSimulatedUsers = 50_000_000;

const command: CalculatorCommand = {
  name: "skew-check",
  help,
  options: {
    "payer-share": { type: "string" },
    "log-mean": { type: "string" },
    "log-sd": { type: "string" },
    n: { type: "string" },
    lift: { type: "string" },
    alpha: { type: "string" },
    sims: { type: "string" },
    seed: { type: "string" },
    json: { type: "boolean" },
  },
  flagNames: { nPerArm: "--n", simulations: "--sims" },
};

export async function run(args: string[], io: CommandIo): Promise<number> {
  return runCalculatorCommand(command, args, io, (flags) => {
    const simulations = flags.numberOr("sims", 2000);
    const nPerArm = flags.requiredNumber("n");
    if (simulations * nPerArm > maximumSimulatedUsers) {
      throw new FlagError(
        `--sims x --n must be at most ${maximumSimulatedUsers.toLocaleString("en-US")}; lower --sims`,
      );
    }
    const seed = flags.numberOr("seed", 1);
    if (!Number.isInteger(seed)) throw new FlagError(`--seed must be an integer; got ${seed}`);
    const result = simulateSkewedMetric(
      {
        metric: {
          kind: "zeroInflatedLogNormal",
          payerShare: flags.requiredNumber("payer-share"),
          logMean: flags.requiredNumber("log-mean"),
          logSd: flags.requiredNumber("log-sd"),
        },
        nPerArm,
        simulations,
        lift: flags.numberOr("lift", 0.05),
        alpha: flags.numberOr("alpha", 0.05),
      },
      createRandom(seed),
    );
    if (flags.has("json")) {
      io.out(JSON.stringify({ ...result, seed }));
      return;
    }
    const pct = (value: number) => `${(value * 100).toFixed(2)} %`;
    io.out(
      [
        `Welch t-test on the simulated metric, ${nPerArm} users per arm, ${simulations} runs each (seed ${seed})`,
        `  false-positive rate  ${pct(result.falsePositiveRate)} +- ${pct(result.falsePositiveRateStandardError)} (nominal ${pct(result.nominalAlpha)})` +
          (result.offNominal ? "  <- NOT the nominal alpha" : ""),
        `  power at lift ${result.lift}  ${pct(result.power)} +- ${pct(result.powerStandardError)} (normal approximation ${pct(result.nominalPower)})`,
        `  metric mean ${result.metricMean.toPrecision(4)}, sd ${result.metricSd.toPrecision(4)}, skewness ${result.metricSkewness.toPrecision(3)}`,
        ...notesBlock(result.assumptions, result.cautions),
      ].join("\n"),
    );
  });
}

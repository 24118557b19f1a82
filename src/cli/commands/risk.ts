/**
 * `plumbline risk --win-rate P --alpha A --power B [--tests N] [--json]`: the error rates of a
 * design (statistics.md section 2): false positive risk of a win, the error given any rejection,
 * the error given no rejection, and the expected confusion matrix for N tests.
 */
import { calculatorCautions, riskAssumptions } from "../../stats/calculator-notes.ts";
import { designErrorRates } from "../../stats/error-rates.ts";
import { type CalculatorCommand, notesBlock, percent, runCalculatorCommand } from "../calculator-flags.ts";
import type { CommandIo } from "../io.ts";

export const summary =
  "error rates of a design: false positive risk, errors given (no) rejection, confusion matrix";

const help = `Usage: plumbline risk --win-rate P --alpha A --power B [--tests N] [--json]

  --win-rate P   prior share of tested ideas that are real wins, in (0, 1)
  --alpha A      two-sided significance level, in (0, 1)
  --power B      power at the effect sizes that count, in (0, 1)
  --tests N      number of tests for the expected confusion matrix (default 1000)
  --json         print one JSON document`;

const command: CalculatorCommand = {
  name: "risk",
  help,
  options: {
    "win-rate": { type: "string" },
    alpha: { type: "string" },
    power: { type: "string" },
    tests: { type: "string" },
    json: { type: "boolean" },
  },
};

export async function run(args: string[], io: CommandIo): Promise<number> {
  return runCalculatorCommand(command, args, io, (flags) => {
    const input = {
      winRate: flags.requiredNumber("win-rate"),
      alpha: flags.requiredNumber("alpha"),
      power: flags.requiredNumber("power"),
      ...flags.optionalNumber("tests", "tests"),
    };
    const rates = designErrorRates(input);
    const assumptions = riskAssumptions(input);
    if (flags.has("json")) {
      io.out(JSON.stringify({ ...rates, inputs: input, assumptions, cautions: calculatorCautions }));
      return;
    }
    const c = rates.confusion;
    const count = (value: number) => (Number.isInteger(value) ? String(value) : value.toFixed(1));
    io.out(
      [
        `Design: win rate ${input.winRate}, alpha ${input.alpha} (two-sided), power ${input.power}`,
        "",
        `False positive risk (significant wins that are not real): ${percent(rates.falsePositiveRisk)}`,
        `False omission risk (non-wins that were real wins):       ${percent(rates.falseOmissionRisk)}`,
        `Error given a rejection (either direction, full alpha):   ${percent(rates.errorGivenRejection)}`,
        `Error given no rejection:                                 ${percent(rates.errorGivenNoRejection)}`,
        "",
        `Expected outcomes of ${count(c.tests)} tests:`,
        `                    significant   not significant`,
        `  real effect       ${count(c.truePositives).padStart(11)}   ${count(c.falseNegatives).padStart(15)}`,
        `  no effect         ${count(c.falsePositives).padStart(11)}   ${count(c.trueNegatives).padStart(15)}`,
        `  false discovery rate of significant results: ${percent(c.falseDiscoveryRate)}`,
        ...notesBlock(assumptions, calculatorCautions),
      ].join("\n"),
    );
  });
}

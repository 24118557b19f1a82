/** Shared flag handling for the stateless calculator commands (risk, design, size). */
import { StatsInputError } from "../stats/errors.ts";
import type { CommandIo } from "./io.ts";

/** A malformed flag value; reported with the usage text and exit code 2. */
export class FlagError extends Error {}

/** Parses a numeric flag; undefined when absent. */
export function numberFlag(name: string, value: string | undefined): number | undefined {
  if (value === undefined) return undefined;
  const parsed = Number(value.trim());
  if (value.trim() === "" || !Number.isFinite(parsed)) {
    throw new FlagError(`--${name} must be a number; got ${JSON.stringify(value)}`);
  }
  return parsed;
}

export function requiredNumberFlag(name: string, value: string | undefined): number {
  const parsed = numberFlag(name, value);
  if (parsed === undefined) throw new FlagError(`--${name} is required`);
  return parsed;
}

/** Runs a calculator body, turning flag and input errors into a message and exit code 2. */
export function runCalculator(command: string, help: string, io: CommandIo, body: () => void): number {
  try {
    body();
    return 0;
  } catch (error) {
    if (error instanceof FlagError) {
      io.err(`plumbline ${command}: ${error.message}\n\n${help}`);
      return 2;
    }
    if (error instanceof StatsInputError) {
      io.err(`plumbline ${command}: ${flagMessage(error)}`);
      return 2;
    }
    throw error;
  }
}

/** Formats a probability as a percentage with enough digits to be read. */
export function percent(value: number): string {
  if (value !== 0 && Math.abs(value) < 0.001) return `${(value * 100).toPrecision(2)} %`;
  return `${(value * 100).toFixed(1)} %`;
}

export function notesBlock(assumptions: readonly string[], cautions: readonly string[]): string[] {
  return [
    "",
    "Assumptions:",
    ...assumptions.map((line) => `  - ${line}`),
    "",
    "Cautions:",
    ...cautions.map((line) => `  - ${line}`),
  ];
}

const flagOverrides: Record<string, string> = {
  standardError: "se",
  covariateCorrelation: "variance-reduction",
  varianceReduction: "variance-reduction",
  metric: "baseline / --sd",
  relativeEffect: "mde",
  absoluteEffect: "mde-absolute",
};

/** Restates a statistics input error in terms of the command's flags ("winRate" -> "--win-rate"). */
function flagMessage(error: StatsInputError): string {
  const parameter = error.parameter;
  if (!/^[A-Za-z]+$/.test(parameter) || !error.message.startsWith(parameter)) return error.message;
  const flag =
    flagOverrides[parameter] ?? parameter.replace(/[A-Z]/g, (letter) => `-${letter.toLowerCase()}`);
  return `--${flag}${error.message.slice(parameter.length)}`;
}

/**
 * Shared flag handling for the calculator commands (risk, design, size, calibrate, skew-check):
 * strict parsing with --help, numeric flags, and one way of reporting a refusal. Every refusal
 * exits 2 and names the flag and the condition: flag errors print the usage text too, and a
 * statistics input error is restated in terms of the command's flags ("winRate" -> "--win-rate").
 */
import { type ParseArgsConfig, parseArgs } from "node:util";
import { StatsInputError } from "../stats/errors.ts";
import type { CommandIo } from "./io.ts";

/** A malformed or missing flag value; reported with the usage text and exit code 2. */
export class FlagError extends Error {}

export type FlagValues = Readonly<Record<string, string | boolean | undefined>>;

type OptionsConfig = NonNullable<ParseArgsConfig["options"]>;

/** An error class whose message is already written for the user (printed as is, exit 2). */
type UserErrorClass = abstract new (...args: never[]) => Error;

export interface CalculatorCommand {
  /** The command's name, as typed after `plumbline`. */
  readonly name: string;
  readonly help: string;
  /** The command's flags; --help (-h) is added. */
  readonly options: OptionsConfig;
  /** Statistics parameter -> flag (without the dashes) where the generic kebab-case does not fit. */
  readonly flagNames?: Readonly<Record<string, string>>;
  /** Further error classes whose message is shown as is. */
  readonly userErrors?: readonly UserErrorClass[];
}

/** Parses a numeric flag value; undefined when absent. */
export function numberFlag(name: string, value: string | undefined): number | undefined {
  if (value === undefined) return undefined;
  const parsed = Number(value.trim());
  if (value.trim() === "" || !Number.isFinite(parsed)) {
    throw new FlagError(`--${name} must be a number; got ${JSON.stringify(value)}`);
  }
  return parsed;
}

/** Typed access to parsed flag values. */
export class Flags {
  constructor(readonly values: FlagValues) {}

  text(name: string): string | undefined {
    const value = this.values[name];
    return typeof value === "string" ? value : undefined;
  }

  has(name: string): boolean {
    return this.values[name] !== undefined;
  }

  number(name: string): number | undefined {
    return numberFlag(name, this.text(name));
  }

  numberOr(name: string, fallback: number): number {
    return this.number(name) ?? fallback;
  }

  requiredNumber(name: string): number {
    const parsed = this.number(name);
    if (parsed === undefined) throw new FlagError(`--${name} is required`);
    return parsed;
  }

  /** One of the allowed words, or undefined when absent. */
  choice<Choice extends string>(name: string, allowed: readonly Choice[]): Choice | undefined {
    const value = this.text(name);
    if (value === undefined) return undefined;
    if (!(allowed as readonly string[]).includes(value)) {
      throw new FlagError(`--${name} must be one of ${allowed.join(", ")}; got ${JSON.stringify(value)}`);
    }
    return value as Choice;
  }

  /** An object with `key` set to the flag's number, or empty when the flag is absent. */
  optionalNumber<Key extends string>(key: Key, name: string): { [K in Key]?: number } {
    const parsed = this.number(name);
    return (parsed === undefined ? {} : { [key]: parsed }) as { [K in Key]?: number };
  }
}

/**
 * Parses the arguments and runs the command body; turns flag errors, statistics input errors
 * and the command's own user errors into a message on stderr and exit code 2.
 */
export async function runCalculatorCommand(
  command: CalculatorCommand,
  args: string[],
  io: CommandIo,
  body: (flags: Flags) => void | Promise<void>,
): Promise<number> {
  try {
    let values: FlagValues;
    try {
      ({ values } = parseArgs({
        args,
        strict: true,
        allowPositionals: false,
        options: { ...command.options, help: { type: "boolean", short: "h" } },
      }));
    } catch (error) {
      throw new FlagError((error as Error).message);
    }
    if (values.help) {
      io.out(command.help);
      return 0;
    }
    await body(new Flags(values));
    return 0;
  } catch (error) {
    if (error instanceof FlagError) {
      io.err(`plumbline ${command.name}: ${error.message}\n\n${command.help}`);
      return 2;
    }
    if (error instanceof StatsInputError) {
      io.err(`plumbline ${command.name}: ${flagMessage(error, command.flagNames ?? {})}`);
      return 2;
    }
    if (command.userErrors?.some((kind) => error instanceof kind)) {
      io.err(`plumbline ${command.name}: ${(error as Error).message}`);
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

/**
 * Restates a statistics input error in terms of the command's flags: a mapped parameter takes
 * its flag text; a plain camelCase one becomes its kebab-case flag; anything else stays as is.
 */
export function flagMessage(error: StatsInputError, flagNames: Readonly<Record<string, string>>): string {
  const parameter = error.parameter;
  if (!error.message.startsWith(parameter)) return error.message;
  const mapped = flagNames[parameter];
  if (mapped === undefined && !/^[A-Za-z]+$/.test(parameter)) return error.message;
  const flag = mapped ?? `--${parameter.replace(/[A-Z]/g, (letter) => `-${letter.toLowerCase()}`)}`;
  return `${flag}${error.message.slice(parameter.length)}`;
}

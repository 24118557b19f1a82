/**
 * The one error a user-facing statistical procedure throws on bad input.
 * Low-level kernels return NaN outside their domain instead; procedures validate first.
 * Message grammar: "<parameter> must be <condition>; got <value>".
 */
export class StatsInputError extends Error {
  readonly parameter: string;
  constructor(parameter: string, condition: string, value: unknown) {
    super(`${parameter} must be ${condition}; got ${formatValue(value)}`);
    this.name = "StatsInputError";
    this.parameter = parameter;
  }
}

function formatValue(value: unknown): string {
  if (typeof value === "number") return Number.isNaN(value) ? "NaN" : String(value);
  if (typeof value === "string") return JSON.stringify(value);
  return String(value);
}

export function requireFinite(parameter: string, value: number): void {
  if (!Number.isFinite(value)) throw new StatsInputError(parameter, "a finite number", value);
}

export function requirePositive(parameter: string, value: number): void {
  if (!Number.isFinite(value) || value <= 0)
    throw new StatsInputError(parameter, "a positive finite number", value);
}

export function requireOpenUnit(parameter: string, value: number): void {
  if (!Number.isFinite(value) || value <= 0 || value >= 1) {
    throw new StatsInputError(parameter, "strictly between 0 and 1", value);
  }
}

export function requireUnitInterval(parameter: string, value: number): void {
  if (!Number.isFinite(value) || value < 0 || value > 1) {
    throw new StatsInputError(parameter, "between 0 and 1", value);
  }
}

/**
 * Named tolerances for comparing computed values with reference values. A failure message
 * prints the quantity, the inputs, the actual and expected values and the tolerance.
 */
import { expect } from "vitest";

export interface Tolerance {
  /** Allowed |actual - expected| / |expected|. */
  readonly relative?: number;
  /** Allowed |actual - expected| (used when expected is 0 or tiny). */
  readonly absolute?: number;
}

export function describeMismatch(
  quantity: string,
  inputs: unknown,
  actual: number,
  expected: number,
  tolerance: Tolerance,
): string {
  return `${quantity}: inputs ${JSON.stringify(inputs)}, actual ${actual}, expected ${expected}, tolerance ${JSON.stringify(tolerance)}`;
}

export function withinTolerance(actual: number, expected: number, tolerance: Tolerance): boolean {
  if (Number.isNaN(expected)) return Number.isNaN(actual);
  if (!Number.isFinite(expected)) return actual === expected;
  const difference = Math.abs(actual - expected);
  if (tolerance.absolute !== undefined && difference <= tolerance.absolute) return true;
  if (tolerance.relative !== undefined && difference <= tolerance.relative * Math.abs(expected)) return true;
  return difference === 0;
}

export function expectClose(
  quantity: string,
  inputs: unknown,
  actual: number,
  expected: number,
  tolerance: Tolerance,
): void {
  const message = describeMismatch(quantity, inputs, actual, expected, tolerance);
  expect(withinTolerance(actual, expected, tolerance), message).toBe(true);
}

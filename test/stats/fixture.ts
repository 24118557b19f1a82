/** Reads a committed reference fixture written by test/fixtures/calculators/generate.R. */
import { readFileSync } from "node:fs";
import { fileURLToPath } from "node:url";

export interface Fixture<Case> {
  readonly generator: string;
  readonly command: string;
  readonly rVersion: string;
  readonly note: string;
  readonly cases: readonly Case[];
}

export function readCalculatorFixture<Case>(name: string): Fixture<Case> {
  const path = fileURLToPath(new URL(`../fixtures/calculators/${name}.json`, import.meta.url));
  // R writes Inf as 1e999, which JSON.parse reads as Infinity.
  return JSON.parse(readFileSync(path, "utf8")) as Fixture<Case>;
}

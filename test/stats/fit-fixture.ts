/** Reads a committed reference fixture written by test/fixtures/fit/generate.R. */
import { readFileSync } from "node:fs";
import { fileURLToPath } from "node:url";

export interface FitFixtureHeader {
  readonly generator: string;
  readonly command: string;
  readonly rVersion: string;
  readonly packages: string;
  readonly note: string;
}

export function readFitFixture<Body>(name: string): FitFixtureHeader & Body {
  const path = fileURLToPath(new URL(`../fixtures/fit/${name}.json`, import.meta.url));
  return JSON.parse(readFileSync(path, "utf8")) as FitFixtureHeader & Body;
}

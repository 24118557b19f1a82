/** Reads a committed reference fixture written by test/fixtures/review/generate.R. */
import { readFileSync } from "node:fs";
import { fileURLToPath } from "node:url";
import type { Fixture } from "./fixture.ts";

export function readReviewFixture<Case>(name: string): Fixture<Case> {
  const path = fileURLToPath(new URL(`../fixtures/review/${name}.json`, import.meta.url));
  return JSON.parse(readFileSync(path, "utf8")) as Fixture<Case>;
}

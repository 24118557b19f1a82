/**
 * The review's reader gives back exactly what was stored: every double bit for bit (it passes
 * reals through SQLite's printf('%!.17g'); 17 significant digits identify a double, IEEE 754-2008
 * section 5.12.2), text with quotes, tabs, newlines and non-ASCII characters, nulls and flags, in
 * result id order. The reference is drizzle's own typed select of the same rows.
 */
import { asc, eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { experiments, metrics, results, workspaces } from "../../src/db/schema.ts";
import { readReviewData } from "../../src/review/read-review-data.ts";
import { storedDataVersion } from "../../src/review/review-cache.ts";
import { resolveFilters } from "../../src/review/review-filters.ts";
import { createRandom } from "../../src/stats/random.ts";
import { createTestDb } from "../helpers/db.ts";

let handle: Awaited<ReturnType<typeof createTestDb>>;
let workspaceId: number;
const count = 3000;

/** A double from random bits: any sign, exponent and mantissa (finite, and not NaN). */
function randomDouble(random: ReturnType<typeof createRandom>): number {
  const view = new DataView(new ArrayBuffer(8));
  for (;;) {
    view.setUint32(0, Math.floor(random.uniform() * 2 ** 32));
    view.setUint32(4, Math.floor(random.uniform() * 2 ** 32));
    const value = view.getFloat64(0);
    if (Number.isFinite(value)) return value;
  }
}

beforeAll(async () => {
  handle = await createTestDb();
  const db = handle.db;
  const [workspace] = await db.insert(workspaces).values({ name: "reader" }).returning({ id: workspaces.id });
  workspaceId = workspace?.id as number;
  const [metric] = await db
    .insert(metrics)
    .values({ workspaceId, key: "m", name: "m", kind: "binary", direction: "increase", family: "checkout" })
    .returning({ id: metrics.id });
  const random = createRandom(20261205);
  const special = [0, -0, 5e-324, -5e-324, 2.2250738585072014e-308, 1.7976931348623157e308, 0.1, 1 / 3];
  const names = ['He said "ship it"', "tab\there", "line\nbreak", "Ünïcødé ✓", "back\\slash", "plain"];
  await db.transaction(async (tx) => {
    for (let i = 0; i < count; i++) {
      const [experiment] = await tx
        .insert(experiments)
        .values({
          workspaceId,
          key: `R-${i}`,
          name: names[i % names.length] as string,
          team: i % 5 === 0 ? null : `team ${i % 3}`,
          startedOn: i % 7 === 0 ? null : "2026-02-03",
          decidedOn: i % 2 === 0 ? "2026-03-04" : null,
          isAa: i % 11 === 0,
          stoppedEarly: i % 13 === 0,
          decision: i % 3 === 0 ? "shipped" : "not_shipped",
        })
        .returning({ id: experiments.id });
      const lift = i < special.length ? (special[i] as number) : randomDouble(random);
      const liftSe =
        i < special.length
          ? Math.abs(special[special.length - 1 - i] as number)
          : Math.abs(randomDouble(random));
      await tx.insert(results).values({
        experimentId: experiment?.id as number,
        metricId: metric?.id as number,
        isPrimary: true,
        input: { lift: String(lift), se: String(liftSe) },
        inputForm: "standard_error",
        lift,
        liftSe,
        srmFlagged: i % 17 === 0,
      });
    }
  });
}, 120_000);
afterAll(() => handle.dispose());

describe("readReviewData", () => {
  it("reads every stored double, text and flag exactly, in result id order", async () => {
    const data = await readReviewData(handle.db, workspaceId, resolveFilters({}));
    const stored = await handle.db
      .select({
        lift: results.lift,
        liftSe: results.liftSe,
        srm: results.srmFlagged,
        key: experiments.key,
        name: experiments.name,
        team: experiments.team,
        isAa: experiments.isAa,
        stoppedEarly: experiments.stoppedEarly,
        decision: experiments.decision,
      })
      .from(results)
      .innerJoin(experiments, eq(results.experimentId, experiments.id))
      .orderBy(asc(results.id));
    expect(data.familyTests).toHaveLength(count);
    stored.forEach((row, i) => {
      const test = data.familyTests[i];
      // Object.is tells 0 from -0 as well.
      if (!Object.is(test?.y, row.lift) || !Object.is(test?.s, row.liftSe))
        throw new Error(`row ${i}: read ${test?.y}, ${test?.s}; stored ${row.lift}, ${row.liftSe}`);
      expect({
        key: test?.key,
        name: test?.name,
        team: test?.team,
        isAa: test?.isAa,
        sampleRatioMismatch: test?.sampleRatioMismatch,
        stoppedEarly: test?.stoppedEarly,
        decision: test?.decision,
      }).toEqual({
        key: row.key,
        name: row.name,
        team: row.team,
        isAa: row.isAa,
        sampleRatioMismatch: row.srm,
        stoppedEarly: row.stoppedEarly,
        decision: row.decision,
      });
    });
  });

  it("reads a family once per data version, filters the rows it remembers, and reads again after a write", async () => {
    const version = await storedDataVersion(handle.db, workspaceId);
    const first = await readReviewData(handle.db, workspaceId, resolveFilters({}), version);
    const again = await readReviewData(handle.db, workspaceId, resolveFilters({ team: "team 1" }), version);
    // The same rows (not read again), with the team filter applied to them.
    expect(again.familyTests).toBe(first.familyTests);
    expect(again.fingerprint).toBe(first.fingerprint);
    const direct = await readReviewData(handle.db, workspaceId, resolveFilters({ team: "team 1" }));
    expect(again.reviewedTests.map((test) => test.key)).toEqual(direct.reviewedTests.map((test) => test.key));
    expect(again.reviewedTests.length).toBeGreaterThan(0);
    expect(again.reviewedTests.length).toBeLessThan(count);
    const dated = await readReviewData(
      handle.db,
      workspaceId,
      resolveFilters({ from: "2026-03-01" }),
      version,
    );
    const datedDirect = await readReviewData(handle.db, workspaceId, resolveFilters({ from: "2026-03-01" }));
    expect(dated.reviewedTests.map((test) => test.key)).toEqual(
      datedDirect.reviewedTests.map((test) => test.key),
    );
    // A write bumps the version: the next read at the new version sees it.
    const [firstResult] = await handle.db
      .select({ id: results.id })
      .from(results)
      .orderBy(asc(results.id))
      .limit(1);
    await handle.db
      .update(results)
      .set({ lift: 0.125 })
      .where(eq(results.id, firstResult?.id as number));
    const newer = await storedDataVersion(handle.db, workspaceId);
    expect(newer).toBeGreaterThan(version);
    const after = await readReviewData(handle.db, workspaceId, resolveFilters({}), newer);
    expect(after.familyTests[0]?.y).toBe(0.125);
    expect(after.fingerprint).not.toBe(first.fingerprint);
  });
});

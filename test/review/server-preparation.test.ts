/**
 * The running server prepares the review after a write through the API: an accepted import is
 * followed, once writes have settled, by the default review of every family being computed in the
 * background (src/server.ts wires the app's write hook to the preparer's soon()), with no periodic
 * check involved (they are set an hour apart here).
 */
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { issueToken } from "../../src/api/tokens.ts";
import { generateDemo } from "../../src/demo/generate-demo.ts";
import { readFamilyCounts } from "../../src/review/read-review-data.ts";
import { cachedReview, reviewIdentity } from "../../src/review/run-review.ts";
import { type RunningServer, startServer } from "../../src/server.ts";
import { createTestDb } from "../helpers/db.ts";
import { seedHistory } from "./seed-history.ts";

let handle: Awaited<ReturnType<typeof createTestDb>>;
let workspaceId: number;
let server: RunningServer;
let writeToken: string;

beforeAll(async () => {
  handle = await createTestDb();
  ({ workspaceId } = await seedHistory(
    handle.db,
    "wrenfield",
    generateDemo({ seed: 13, experiments: 150 }).truth.experiments,
  ));
  writeToken = (await issueToken(handle.db, { workspaceId, role: "write" })).token;
  server = await startServer({ db: handle.db, port: 0, hostname: "127.0.0.1", prepareReviewsEvery: 3600 });
}, 60_000);

afterAll(async () => {
  await server?.close();
  handle.dispose();
});

async function preparedFamilies(): Promise<boolean[]> {
  const families = await readFamilyCounts(handle.db, workspaceId);
  const requests = [{}, ...families.map((row) => ({ filters: { family: row.family } }))];
  return Promise.all(
    requests.map(
      async (request) =>
        (await cachedReview(handle.db, await reviewIdentity(handle.db, workspaceId, request), true, {
          readTable: false,
        })) !== null,
    ),
  );
}

describe("the server's preparation after an API write", () => {
  it("computes every family's default review in the background once the import has settled", async () => {
    const family = (await readFamilyCounts(handle.db, workspaceId))[0]?.family as string;
    const csv = [
      "experiment,name,team,metric,metric_kind,direction,started_on,ended_on,decision,is_aa,stopped_early,lift,lift_se,primary",
      `wf-new-1,Added later,growth,${family},binary,increase,2026-10-01,2026-10-15,shipped,no,no,0.021,0.008,yes`,
    ].join("\n");
    const response = await fetch(`${server.url}/api/v1/imports?fileName=later.csv`, {
      method: "POST",
      headers: { authorization: `Bearer ${writeToken}`, "content-type": "text/csv" },
      body: `${csv}\n`,
    });
    expect(response.status).toBe(200);
    expect(await preparedFamilies()).not.toContain(true);
    // The preparer waits 2 s after the last write, then computes: poll the cache without computing.
    const deadline = Date.now() + 60_000;
    let prepared = await preparedFamilies();
    while (prepared.includes(false) && Date.now() < deadline) {
      await new Promise((resolve) => setTimeout(resolve, 250));
      prepared = await preparedFamilies();
    }
    expect(prepared.length).toBeGreaterThan(2);
    expect(prepared.every(Boolean)).toBe(true);
  }, 90_000);
});

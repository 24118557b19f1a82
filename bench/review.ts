/**
 * Program review benchmark: a workspace with 1e5 stored tests, reviewed over HTTP (the real
 * server on a local port). Targets: cold (computed) <= 1 s, warm (same request, from the cache)
 * <= 50 ms. Baseline in the same process: GET /api/health over the same HTTP connection path.
 * Two configurations are timed: the default review (prior family chosen by likelihood among all
 * families, 100 bootstrap refits) and the leanest one (one family, no bootstrap), so that the time
 * spent fitting priors shows apart from the review itself. Above 20,000 included tests the default
 * review takes 20 refits and fits the grid sensitivity row on 100 points (run-review.ts; both stated
 * in the review's assumptions), so the default figure at 1e5 tests is for those settings. Tests are simulated (70 % nulls, the
 * rest N(0, 0.02^2), SE uniform on [0.005, 0.03]; shipped when z > 1.96), written with drizzle.
 * Run: npm run bench -- review   (PLUMBLINE_BENCH_REVIEW_TESTS=20000 for a shorter run)
 */
import { mkdtempSync, rmSync } from "node:fs";
import type { AddressInfo } from "node:net";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { serve } from "@hono/node-server";
import { createApp } from "../src/api/app.ts";
import { issueToken } from "../src/api/tokens.ts";
import { createDb } from "../src/db/client.ts";
import { experiments, metrics, results, workspaces } from "../src/db/schema.ts";
import { createRandom } from "../src/stats/random.ts";

const testCount = Number(process.env.PLUMBLINE_BENCH_REVIEW_TESTS ?? 100_000);
const warmRepeats = 21;
const chunkRows = 1000;

function median(values: number[]): number {
  const sorted = [...values].sort((a, b) => a - b);
  return sorted[Math.floor(sorted.length / 2)] as number;
}

export async function runReviewBench(): Promise<object> {
  const folder = mkdtempSync(join(tmpdir(), "plumbline-bench-review-"));
  const handle = await createDb(`file:${join(folder, "bench.db")}`);
  try {
    const db = handle.db;
    const [workspace] = await db
      .insert(workspaces)
      .values({ name: "bench" })
      .returning({ id: workspaces.id });
    const workspaceId = workspace?.id as number;
    const [metric] = await db
      .insert(metrics)
      .values({
        workspaceId,
        key: "orders",
        name: "orders",
        kind: "binary",
        direction: "increase",
        family: "conversion",
      })
      .returning({ id: metrics.id });
    const random = createRandom(20261001);
    const seedStarted = performance.now();
    for (let start = 0; start < testCount; start += chunkRows) {
      const size = Math.min(chunkRows, testCount - start);
      const rows = Array.from({ length: size }, (_, offset) => {
        const index = start + offset;
        const s = 0.005 + 0.025 * random.uniform();
        const isAa = random.uniform() < 0.02;
        const theta = isAa || random.uniform() < 0.7 ? 0 : 0.02 * random.normal();
        const y = theta + s * random.normal();
        const month = String(1 + (index % 12)).padStart(2, "0");
        return { index, s, y, isAa, decidedOn: `${2023 + (index % 3)}-${month}-15` };
      });
      await db.transaction(async (tx) => {
        const inserted = await tx
          .insert(experiments)
          .values(
            rows.map((row) => ({
              workspaceId,
              key: `T-${row.index}`,
              name: `Test ${row.index}`,
              team: `team-${row.index % 7}`,
              decidedOn: row.decidedOn,
              isAa: row.isAa,
              decision: row.y / row.s > 1.959964 ? ("shipped" as const) : ("not_shipped" as const),
            })),
          )
          .returning({ id: experiments.id });
        await tx.insert(results).values(
          rows.map((row, offset) => ({
            experimentId: inserted[offset]?.id as number,
            metricId: metric?.id as number,
            isPrimary: true,
            input: { lift: String(row.y), se: String(row.s) },
            inputForm: "standard_error",
            lift: row.y,
            liftSe: row.s,
          })),
        );
      });
    }
    const seedSeconds = (performance.now() - seedStarted) / 1000;
    const { token } = await issueToken(db, { workspaceId, role: "read" });

    const app = createApp({ db }, { logError: () => undefined });
    const server = serve({ fetch: app.fetch, port: 0, hostname: "127.0.0.1" });
    await new Promise<void>((resolve) => server.once("listening", () => resolve()));
    const port = (server.address() as AddressInfo).port;
    const base = `http://127.0.0.1:${port}`;
    const headers = { authorization: `Bearer ${token}` };
    const timed = async (
      path: string,
    ): Promise<{ seconds: number; status: number; body: Record<string, unknown> }> => {
      const started = performance.now();
      const response = await fetch(`${base}${path}`, { headers });
      const body = (await response.json()) as Record<string, unknown>;
      return { seconds: (performance.now() - started) / 1000, status: response.status, body };
    };
    try {
      const baselineTimes: number[] = [];
      for (let repeat = 0; repeat < warmRepeats; repeat++)
        baselineTimes.push((await timed("/api/health")).seconds);
      const baseline = median(baselineTimes);
      const configurations = {
        default: "/api/v1/review?family=conversion",
        leanest: "/api/v1/review?family=conversion&priorFamily=symmetric&bootstrap=0",
      };
      const measured: Record<string, unknown> = {};
      for (const [name, path] of Object.entries(configurations)) {
        process.stderr.write(`bench: review ${name} cold...\n`);
        const cold = await timed(path);
        const warmTimes: number[] = [];
        let allCached = true;
        for (let repeat = 0; repeat < warmRepeats; repeat++) {
          const warm = await timed(path);
          warmTimes.push(warm.seconds);
          if (warm.body.cached !== true) allCached = false;
        }
        const warm = median(warmTimes);
        measured[name] = {
          path,
          status: cold.status,
          coldSeconds: cold.seconds,
          warmSecondsMedian: warm,
          warmAllFromCache: allCached,
          coldWithinTarget: cold.seconds <= 1,
          warmWithinTarget: warm <= 0.05,
          coldToBaseline: cold.seconds / baseline,
          warmToBaseline: warm / baseline,
          shipped: cold.body.shipped,
          priorFamily: (cold.body.prior as { family?: string } | undefined)?.family,
        };
      }
      return {
        command: "npm run bench -- review",
        tests: testCount,
        seedSeconds,
        baseline: { what: "GET /api/health over HTTP, median", seconds: baseline },
        targets: { coldSeconds: 1, warmSeconds: 0.05 },
        configurations: measured,
      };
    } finally {
      server.close();
    }
  } finally {
    handle.close();
    rmSync(folder, { recursive: true, force: true });
  }
}

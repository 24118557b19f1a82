/** The registry of review runs: sharing, progress, failures, scoping and how long runs are kept. */
import { describe, expect, it } from "vitest";
import { ReviewRuns } from "../../src/review/review-runs.ts";
import type { ReviewOutcome, ReviewSummary } from "../../src/review/run-review.ts";

function outcome(cacheKey: string, withTests: boolean): ReviewOutcome {
  return {
    summary: { metricFamily: "conversion" } as unknown as ReviewSummary,
    tests: withTests ? [] : null,
    cached: false,
    cacheKey,
  };
}

/** A computation the test finishes by hand, counting how often it was started. */
function controlled() {
  let calls = 0;
  let finish: (value: ReviewOutcome) => void = () => undefined;
  let failWith: (error: unknown) => void = () => undefined;
  let report: (message: string) => void = () => undefined;
  const compute = (onProgress: (message: string) => void) => {
    calls += 1;
    report = onProgress;
    return new Promise<ReviewOutcome>((resolve, reject) => {
      finish = resolve;
      failWith = reject;
    });
  };
  return {
    compute,
    calls: () => calls,
    finish: (value: ReviewOutcome) => finish(value),
    fail: (error: unknown) => failWith(error),
    progress: (message: string) => report(message),
  };
}

const nextTurn = () => new Promise((resolve) => setTimeout(resolve, 50));

function clock(start = Date.parse("2026-10-01T09:00:00Z")) {
  let at = start;
  return { now: () => new Date(at), advance: (milliseconds: number) => (at += milliseconds) };
}

const describeError = (error: unknown) => ({
  status: 422,
  code: "unprocessable",
  message: error instanceof Error ? error.message : String(error),
});

describe("ReviewRuns", () => {
  it("runs identical requests once, records stages with their times, and keeps the summary", async () => {
    const time = clock();
    const runs = new ReviewRuns({ describeError, now: time.now });
    const work = controlled();
    const first = runs.start(1, "key-a", false, work.compute);
    const second = runs.start(1, "key-a", false, work.compute);
    expect(second.run).toBe(first.run);
    expect(first.run.state).toBe("running");
    await nextTurn();
    expect(work.calls()).toBe(1);
    time.advance(1500);
    work.progress("fitting the prior");
    time.advance(500);
    work.progress("computing the review");
    work.finish(outcome("key-a", false));
    const result = await second.outcome;
    expect(result.cacheKey).toBe("key-a");
    expect(first.run.state).toBe("ready");
    expect(first.run.stages).toEqual([
      { message: "fitting the prior", atSeconds: 1.5 },
      { message: "computing the review", atSeconds: 2 },
    ]);
    expect(first.run.summary?.metricFamily).toBe("conversion");
    expect(first.run.finishedAt?.getTime()).toBe(time.now().getTime());
    // A finished run is not joined: a new request reads the cache or starts afresh.
    const third = runs.start(1, "key-a", false, work.compute);
    expect(third.run).not.toBe(first.run);
  });

  it("lets a summary request join a run that also computes the table, not the other way round", async () => {
    const runs = new ReviewRuns({ describeError });
    const withTable = controlled();
    const table = runs.start(1, "key-b", true, withTable.compute);
    expect(runs.start(1, "key-b", false, withTable.compute).run).toBe(table.run);
    const summaryOnly = controlled();
    const summary = runs.start(1, "key-c", false, summaryOnly.compute);
    const tableAfter = runs.start(1, "key-c", true, summaryOnly.compute);
    expect(tableAfter.run).not.toBe(summary.run);
    await nextTurn();
    expect(withTable.calls()).toBe(1);
    expect(summaryOnly.calls()).toBe(2);
  });

  it("records a failure as the API would report it, and rejects the waiters", async () => {
    const runs = new ReviewRuns({ describeError });
    const work = controlled();
    const started = runs.start(1, "key-d", false, work.compute);
    await nextTurn();
    work.fail(new RangeError('metric family "nothing" is not in this workspace'));
    await expect(started.outcome).rejects.toThrow(/nothing/);
    expect(started.run.state).toBe("failed");
    expect(started.run.error).toEqual({
      status: 422,
      code: "unprocessable",
      message: 'metric family "nothing" is not in this workspace',
    });
    expect(started.run.summary).toBeNull();
  });

  it("finds a run only in its own workspace", () => {
    const runs = new ReviewRuns({ describeError });
    const { run } = runs.start(1, "key-e", false, controlled().compute);
    expect(runs.get(1, run.id)).toBe(run);
    expect(runs.get(2, run.id)).toBeUndefined();
    expect(runs.get(1, "no-such-run")).toBeUndefined();
  });

  it("drops finished runs after the keeping time and beyond the kept number, never running ones", async () => {
    const time = clock();
    const runs = new ReviewRuns({ describeError, now: time.now, keepMilliseconds: 60_000, keptFinished: 2 });
    const finished = [0, 1, 2].map((index) => runs.finished(1, false, outcome(`done-${index}`, false)));
    const running = runs.start(1, "still-running", false, controlled().compute);
    expect(finished[0]?.state).toBe("ready");
    // The third finished run pushed the first out (two kept).
    expect(runs.get(1, finished[0]?.id ?? "")).toBeUndefined();
    expect(runs.get(1, finished[2]?.id ?? "")).toBeDefined();
    time.advance(60_001);
    expect(runs.get(1, finished[2]?.id ?? "")).toBeUndefined();
    expect(runs.get(1, running.run.id)).toBe(running.run);
  });
});

/**
 * Prepares the default review of every metric family of workspaces whose history changed, in the
 * background of the server, so that the review page opens from the cache after an import instead
 * of computing for seconds, for whichever family it shows; and since a review's prior fits are
 * cached apart (review-fits.ts), a review of one team, one quarter or other thresholds then fits
 * nothing and only computes the review itself.
 *
 * Every `intervalMilliseconds` it reads the data versions (one small query). A version is prepared
 * when it is still: at the first check every version (the server just started), later one that
 * has held still for a whole interval after changing (the CLI's imports are seen this way), or any
 * changed version of a workspace once its API writes have settled (soon(), called by the routes
 * that write a history, through the server; an import is one transaction). Preparing means the summary and the per-test table
 * of each family's default review (the family the page opens on first), through the server's
 * run registry, so that a request arriving meanwhile joins the run. One workspace at a time, and
 * never two checks at once.
 */
import type { Database } from "../db/client.ts";
import { dataVersions } from "../db/schema.ts";
import { defaultReviewFamily, readFamilyCounts } from "./read-review-data.ts";
import { type ReviewRuns, startReviewRun } from "./review-runs.ts";
import type { ReviewRequest } from "./run-review.ts";

/**
 * What the review page asks for: each family by name (its family menu), the family with most tests
 * first (the page opens on it: a review without a family is the same cache entry, run-review.ts).
 */
async function preparedRequests(db: Database, workspaceId: number): Promise<ReviewRequest[]> {
  const families = await readFamilyCounts(db, workspaceId);
  const first = defaultReviewFamily(families);
  // A workspace without primary results still gets its (failing) run, which records why.
  if (first === undefined) return [{}];
  const others = families.map((row) => row.family).filter((family) => family !== first);
  return [first, ...others].map((family) => ({ filters: { family } }));
}

const noneSettled: ReadonlySet<number> = new Set();

/** Quiet time after the last write before soon()'s check: a client sending batches sends them closer. */
export const defaultSettleMilliseconds = 2000;

export interface ReviewPreparer {
  /** One check now (what the timer does); resolves when its preparations are done. */
  check(): Promise<void>;
  /**
   * A write to the workspace's history has just been committed through the API (an import is one
   * transaction): once no other such write has followed for `settleMilliseconds`, one check treats
   * the changed versions of the workspaces written so as still and prepares them, instead of
   * waiting for them to be seen twice. Resolves when that check is done.
   */
  soon(workspaceId: number): Promise<void>;
  stop(): void;
}

export function startReviewPreparer(options: {
  readonly db: Database;
  readonly runs: ReviewRuns;
  readonly intervalMilliseconds: number;
  /** How long after the last write soon() waits before its check (default 2000). */
  readonly settleMilliseconds?: number;
  /**
   * Called after each workspace's preparation, with the version prepared, whether any review was
   * computed (not found cached), and how many reviews (families) were prepared.
   */
  readonly onPrepared?: (workspaceId: number, version: number, computed: boolean, reviews: number) => void;
}): ReviewPreparer {
  const { db, runs } = options;
  // The version seen at the previous check, and the version last prepared, per workspace.
  const seen = new Map<number, number>();
  const prepared = new Map<number, number>();
  let stopped = false;
  let timer: NodeJS.Timeout | null = null;
  let checking: Promise<void> | null = null;

  async function prepare(workspaceId: number, version: number): Promise<void> {
    const requests = await preparedRequests(db, workspaceId);
    let computed = false;
    for (const request of requests) {
      if (stopped) return;
      const started = await startReviewRun(db, runs, workspaceId, request, true, { readTable: false });
      try {
        await started.outcome;
      } catch {
        // A family with nothing to review fails its run; the run records why, for a poll.
      }
      if (started.run.cached === false && started.run.state === "ready") computed = true;
    }
    prepared.set(workspaceId, version);
    options.onPrepared?.(workspaceId, version, computed, requests.length);
  }

  async function checkOnce(settled: ReadonlySet<number>): Promise<void> {
    const rows = await db
      .select({ workspaceId: dataVersions.workspaceId, version: dataVersions.version })
      .from(dataVersions);
    const firstCheck = seen.size === 0;
    for (const { workspaceId, version } of rows) {
      if (stopped) return;
      // At the first check (the server just started) no import is under way: every version counts
      // as still, and a review already cached is only looked up. After its API writes have
      // settled (soon()), a workspace's changed version counts as still too.
      const still = firstCheck || settled.has(workspaceId) || seen.get(workspaceId) === version;
      seen.set(workspaceId, version);
      if (still && prepared.get(workspaceId) !== version) await prepare(workspaceId, version);
    }
  }

  function check(): Promise<void> {
    checking ??= checkOnce(noneSettled).finally(() => {
      checking = null;
    });
    return checking;
  }

  // One pending settle: its timer (restarted by every write), the workspaces written, and one
  // promise for every caller until its check is done.
  let settleTimer: NodeJS.Timeout | null = null;
  let settleWorkspaces = new Set<number>();
  let settleDone: { promise: Promise<void>; resolve: () => void } | null = null;

  async function settledCheck(workspaces: ReadonlySet<number>): Promise<void> {
    // After a check under way (it may have begun before the write), one that counts them as settled.
    while (checking) await checking.catch(() => undefined);
    if (stopped) return;
    checking = checkOnce(workspaces).finally(() => {
      checking = null;
    });
    await checking.catch(() => undefined);
  }

  function soon(workspaceId: number): Promise<void> {
    if (stopped) return Promise.resolve();
    settleWorkspaces.add(workspaceId);
    if (!settleDone) {
      let resolve: () => void = () => undefined;
      const promise = new Promise<void>((settle) => {
        resolve = settle;
      });
      settleDone = { promise, resolve };
    }
    const pending = settleDone;
    if (settleTimer) clearTimeout(settleTimer);
    settleTimer = setTimeout(() => {
      settleTimer = null;
      const workspaces = settleWorkspaces;
      settleWorkspaces = new Set();
      settleDone = null;
      void settledCheck(workspaces).finally(pending.resolve);
    }, options.settleMilliseconds ?? defaultSettleMilliseconds);
    settleTimer.unref();
    return pending.promise;
  }

  function schedule(): void {
    if (stopped) return;
    timer = setTimeout(() => {
      check()
        .catch(() => undefined)
        .finally(schedule);
    }, options.intervalMilliseconds);
    // The preparer never keeps the process alive on its own.
    timer.unref();
  }

  schedule();
  return {
    check,
    soon,
    stop() {
      stopped = true;
      if (timer) clearTimeout(timer);
      if (settleTimer) clearTimeout(settleTimer);
      settleDone?.resolve();
      settleDone = null;
    },
  };
}

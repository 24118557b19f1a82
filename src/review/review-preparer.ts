/**
 * Prepares the default review of workspaces whose history changed, in the background of the
 * server, so that the review page opens from the cache after an import instead of computing for
 * seconds. Every `intervalMilliseconds` it reads the data versions (one small query); at the first
 * check every workspace's version, and later a version that has held still for a whole interval
 * after changing (imports arrive in batches; the CLI's imports are seen as well as the API's), gets
 * its default review, the summary and the per-test table as the review page asks for them, through
 * the server's run registry, so that a request arriving meanwhile joins the run. One workspace at a time, and never two checks at once.
 */
import type { Database } from "../db/client.ts";
import { dataVersions } from "../db/schema.ts";
import { type ReviewRuns, startReviewRun } from "./review-runs.ts";

/** The settings the review page starts with (no filters, every default). */
const defaultRequest = {};

export interface ReviewPreparer {
  /** One check now (what the timer does); resolves when its preparations are done. */
  check(): Promise<void>;
  stop(): void;
}

export function startReviewPreparer(options: {
  readonly db: Database;
  readonly runs: ReviewRuns;
  readonly intervalMilliseconds: number;
  /** Called after each workspace's preparation, with the version prepared and whether it ran. */
  readonly onPrepared?: (workspaceId: number, version: number, computed: boolean) => void;
}): ReviewPreparer {
  const { db, runs } = options;
  // The version seen at the previous check, and the version last prepared, per workspace.
  const seen = new Map<number, number>();
  const prepared = new Map<number, number>();
  let stopped = false;
  let timer: NodeJS.Timeout | null = null;
  let checking: Promise<void> | null = null;

  async function prepare(workspaceId: number, version: number): Promise<void> {
    const started = await startReviewRun(db, runs, workspaceId, defaultRequest, true, {
      readTable: false,
    });
    try {
      await started.outcome;
    } catch {
      // A workspace with nothing to review fails its run; the run records why, for a poll.
    }
    prepared.set(workspaceId, version);
    options.onPrepared?.(workspaceId, version, started.run.cached === false && started.run.state === "ready");
  }

  async function checkOnce(): Promise<void> {
    const rows = await db
      .select({ workspaceId: dataVersions.workspaceId, version: dataVersions.version })
      .from(dataVersions);
    const firstCheck = seen.size === 0;
    for (const { workspaceId, version } of rows) {
      if (stopped) return;
      // At the first check (the server just started) no import is under way: every version counts
      // as still, and a review already cached is only looked up.
      const still = firstCheck || seen.get(workspaceId) === version;
      seen.set(workspaceId, version);
      if (still && prepared.get(workspaceId) !== version) await prepare(workspaceId, version);
    }
  }

  function check(): Promise<void> {
    checking ??= checkOnce().finally(() => {
      checking = null;
    });
    return checking;
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
    stop() {
      stopped = true;
      if (timer) clearTimeout(timer);
    },
  };
}

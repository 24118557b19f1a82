/**
 * Review runs: a review computed in the background of the server, with its progress, so that a
 * caller (the review page, a script) starts it, polls it and reads the result when it is ready,
 * instead of holding one request open for the seconds a cold review of a large history takes.
 * Identical requests (same workspace, settings and data version) share one run: a request for the
 * summary also joins a run that computes the per-test table. Finished runs keep their summary (not
 * the table, which the cache holds) for a while, so that a late poll still finds them.
 */
import { randomUUID } from "node:crypto";
import type { Database } from "../db/client.ts";
import { testsCacheKey } from "./review-cache.ts";
import {
  cachedReview,
  type ReviewOutcome,
  type ReviewRequest,
  type ReviewSummary,
  reviewIdentity,
  runReview,
} from "./run-review.ts";

/** How long after its start request a run begins computing. */
const startDelayMilliseconds = 15;

export type ReviewRunState = "running" | "ready" | "failed";

export interface ReviewRunStage {
  readonly message: string;
  /** Seconds since the run started. */
  readonly atSeconds: number;
}

/** How a failed run reports its error (the API's error codes). */
export interface ReviewRunError {
  readonly status: number;
  readonly code: string;
  readonly message: string;
}

export interface ReviewRun {
  readonly id: string;
  readonly workspaceId: number;
  readonly cacheKey: string;
  readonly includesTests: boolean;
  readonly startedAt: Date;
  readonly stages: ReviewRunStage[];
  state: ReviewRunState;
  finishedAt: Date | null;
  /** Whether the result came from the cache of identical requests. */
  cached: boolean;
  summary: ReviewSummary | null;
  error: ReviewRunError | null;
}

/** A started (or joined) run, and its whole outcome (with the table when asked for) to wait on. */
export interface StartedRun {
  readonly run: ReviewRun;
  /** Held by the callers only: a finished run keeps its summary, not the table. */
  readonly outcome: Promise<ReviewOutcome>;
}

export interface ReviewRunsOptions {
  /** How long a finished run is kept for polls (default 15 minutes). */
  readonly keepMilliseconds?: number;
  /** Finished runs kept at most, the oldest dropped first (default 32). */
  readonly keptFinished?: number;
  /** Turns an error of the computation into what a poll reports. */
  readonly describeError: (error: unknown) => ReviewRunError;
  readonly now?: () => Date;
}

export class ReviewRuns {
  private readonly runs = new Map<string, ReviewRun>();
  private readonly running = new Map<string, StartedRun>();
  private readonly keepMilliseconds: number;
  private readonly keptFinished: number;
  private readonly describeError: (error: unknown) => ReviewRunError;
  private readonly now: () => Date;

  constructor(options: ReviewRunsOptions) {
    this.keepMilliseconds = options.keepMilliseconds ?? 15 * 60 * 1000;
    this.keptFinished = options.keptFinished ?? 32;
    this.describeError = options.describeError;
    this.now = options.now ?? (() => new Date());
  }

  /**
   * The running run of this review, or a new one that calls `compute`. `compute` gets a progress
   * callback; the run records each message with its time.
   */
  start(
    workspaceId: number,
    cacheKey: string,
    includeTests: boolean,
    compute: (onProgress: (message: string) => void) => Promise<ReviewOutcome>,
  ): StartedRun {
    const joined =
      this.running.get(runningKey(cacheKey, true)) ??
      (includeTests ? undefined : this.running.get(runningKey(cacheKey, false)));
    if (joined) return joined;
    this.prune();
    const startedAt = this.now();
    const stages: ReviewRunStage[] = [];
    const onProgress = (message: string) => {
      stages.push({ message, atSeconds: (this.now().getTime() - startedAt.getTime()) / 1000 });
    };
    let settle: (outcome: ReviewOutcome) => void = () => undefined;
    let fail: (error: unknown) => void = () => undefined;
    const outcome = new Promise<ReviewOutcome>((resolve, reject) => {
      settle = resolve;
      fail = reject;
    });
    // Waiters attach their own handlers; this one keeps an unawaited failure from being unhandled.
    outcome.catch(() => undefined);
    const run: ReviewRun = {
      id: randomUUID(),
      workspaceId,
      cacheKey,
      includesTests: includeTests,
      startedAt,
      stages,
      state: "running",
      finishedAt: null,
      cached: false,
      summary: null,
      error: null,
    };
    const started = { run, outcome };
    this.runs.set(run.id, run);
    this.running.set(runningKey(cacheKey, includeTests), started);
    const finish = () => {
      run.finishedAt = this.now();
      this.running.delete(runningKey(cacheKey, includeTests));
    };
    // Started a moment later, so that the answer announcing the run goes out first: the embedded
    // database reads on this thread, and the review's first read holds it for a while.
    setTimeout(() => {
      compute(onProgress).then(
        (result) => {
          run.summary = result.summary;
          run.cached = result.cached;
          run.state = "ready";
          finish();
          settle(result);
        },
        (error: unknown) => {
          run.error = this.describeError(error);
          run.state = "failed";
          finish();
          fail(error);
        },
      );
    }, startDelayMilliseconds);
    return started;
  }

  /** A run that is already finished: a review read from the cache, so that every start has an id. */
  finished(workspaceId: number, includeTests: boolean, outcome: ReviewOutcome): ReviewRun {
    this.prune();
    const at = this.now();
    const run: ReviewRun = {
      id: randomUUID(),
      workspaceId,
      cacheKey: outcome.cacheKey,
      includesTests: includeTests,
      startedAt: at,
      stages: [{ message: "read from the cache of identical requests on unchanged data", atSeconds: 0 }],
      state: "ready",
      finishedAt: at,
      cached: outcome.cached,
      summary: outcome.summary,
      error: null,
    };
    this.runs.set(run.id, run);
    return run;
  }

  /** The run with this id in this workspace (a run of another workspace is not found). */
  get(workspaceId: number, id: string): ReviewRun | undefined {
    this.prune();
    const run = this.runs.get(id);
    return run && run.workspaceId === workspaceId ? run : undefined;
  }

  /** Drops finished runs older than the keeping time, and the oldest beyond the kept number. */
  private prune(): void {
    const cutoff = this.now().getTime() - this.keepMilliseconds;
    const finished = [...this.runs.values()].filter((run) => run.finishedAt !== null);
    for (const run of finished) if ((run.finishedAt as Date).getTime() < cutoff) this.runs.delete(run.id);
    const kept = finished.filter((run) => this.runs.has(run.id));
    // Map order is insertion order: the first are the oldest started.
    for (const run of kept.slice(0, Math.max(0, kept.length - this.keptFinished))) this.runs.delete(run.id);
  }
}

function runningKey(cacheKey: string, includeTests: boolean): string {
  return includeTests ? testsCacheKey(cacheKey) : cacheKey;
}

/**
 * Starts (or joins) the run of this review in the registry, or answers from the cache at once with
 * a finished run: what the API's review routes and the background preparer both call. With
 * `readTable: false` a cached table is only checked for, not read (the outcome's `tests` is then
 * null): for callers that want the table computed and cached but not handed to them.
 */
export async function startReviewRun(
  db: Database,
  runs: ReviewRuns,
  workspaceId: number,
  request: ReviewRequest,
  includeTests: boolean,
  options: { readonly readTable?: boolean } = {},
): Promise<StartedRun> {
  const identity = await reviewIdentity(db, workspaceId, request);
  const cached = await cachedReview(db, identity, includeTests, options);
  if (cached)
    return { run: runs.finished(workspaceId, includeTests, cached), outcome: Promise.resolve(cached) };
  return runs.start(workspaceId, identity.cacheKey, includeTests, (onProgress) =>
    runReview(db, workspaceId, request, { includeTests, onProgress }),
  );
}

/**
 * posteriorColumns on two threads: the calling thread and the process's helper thread
 * (helper-thread.ts) write the rows chunk by chunk. The calling thread starts at once and yields
 * between chunks (so that other requests are served meanwhile); whatever chunk the
 * helper claimed but did not finish, because it failed, is written here afterwards. Each row
 * depends on its own (y, s) only, so the columns are the same as posteriorColumns' (a test checks).
 */
import type { EffectPrior } from "../stats/effect-prior.ts";
import {
  defaultCredibleLevel,
  emptyPosteriorColumns,
  type PosteriorColumns,
  posteriorColumnCount,
  posteriorColumns,
  posteriorProbabilityAboveColumn,
  validatePosteriorInputs,
  validateProbabilityAboveInputs,
  writePosteriorRows,
  writeProbabilityAboveRows,
} from "../stats/posterior.ts";
import { helperThread, sharedFloat64 } from "./helper-thread.ts";
import {
  chunkRange,
  createSharedChunks,
  type SharedChunks,
  unwrittenChunks,
  workOnNextChunk,
  writeChunksHere,
  yieldToEventLoop,
} from "./shared-chunks.ts";

/** Below this many rows one thread is faster than sharing (the helper's start costs ~0.15 s once). */
export const threadedPosteriorRows = 50_000;

interface PosteriorJob {
  readonly columns: PosteriorColumns;
  readonly chunks: SharedChunks;
  readonly write: (from: number, to: number) => void;
  /** Settles when the helper is done with the job (never rejects); undefined without a helper. */
  readonly helperDone: Promise<unknown> | undefined;
}

/** Validates, copies the inputs to shared memory and posts the job to the helper. */
function startPosteriorJob(
  prior: EffectPrior,
  y: ArrayLike<number>,
  s: ArrayLike<number>,
  level: number,
): PosteriorJob {
  validatePosteriorInputs(y, s, level);
  const rows = y.length;
  const sharedY = sharedFloat64(y);
  const sharedS = sharedFloat64(s);
  const buffers = Array.from({ length: posteriorColumnCount }, () => new SharedArrayBuffer(8 * rows));
  const columns = emptyPosteriorColumns(rows, level, buffers);
  const chunks = createSharedChunks(rows);
  // Posted at once: the helper takes it when it is up, and finds nothing left if this thread was faster.
  const helperDone = helperThread()
    ?.run<null>({ kind: "posteriors", prior, level, y: sharedY, s: sharedS, columns: buffers, chunks })
    .catch(() => null);
  const write = (from: number, to: number) => writePosteriorRows(prior, sharedY, sharedS, columns, from, to);
  return { columns, chunks, write, helperDone };
}

type ShareReport = (share: { readonly chunks: number; readonly byHelper: number }) => void;

/** The columns, yielding to the event loop between chunks (for servers and commands). */
export async function posteriorColumnsOnThreads(
  prior: EffectPrior,
  y: ArrayLike<number>,
  s: ArrayLike<number>,
  level: number,
  options: {
    /** Told how many of the chunks the helper thread wrote (0 when it was not up in time). */
    readonly onShare?: ShareReport;
  } = {},
): Promise<PosteriorColumns> {
  if (y.length < threadedPosteriorRows) return posteriorColumns(prior, y, s, level);
  const job = startPosteriorJob(prior, y, s, level);
  let writtenHere = 0;
  const write = (from: number, to: number) => {
    job.write(from, to);
    writtenHere++;
  };
  while (workOnNextChunk(job.chunks, write)) await yieldToEventLoop();
  if (unwrittenChunks(job.chunks).length > 0) {
    // The helper holds chunks: wait for it (it finishes them, or fails and they are written here).
    await job.helperDone;
    for (const chunk of unwrittenChunks(job.chunks)) write(...chunkRange(job.chunks, chunk));
  }
  options.onShare?.({ chunks: job.chunks.done.length, byHelper: job.chunks.done.length - writtenHere });
  return job.columns;
}

/** The same columns without yielding (for pure computations that take a posteriorColumns). */
export function posteriorColumnsOnThreadsNow(
  prior: EffectPrior,
  y: ArrayLike<number>,
  s: ArrayLike<number>,
  level: number = defaultCredibleLevel,
): PosteriorColumns {
  if (y.length < threadedPosteriorRows) return posteriorColumns(prior, y, s, level);
  const job = startPosteriorJob(prior, y, s, level);
  writeChunksHere(job.chunks, job.write);
  return job.columns;
}

/**
 * posteriorProbabilityAboveColumn on two threads, without yielding (for the program review's
 * P(real win) at a threshold other than 0): the same rows, written chunk by chunk here and on the
 * helper; chunks the helper claimed but did not finish are written here.
 */
export function probabilityAboveOnThreadsNow(
  prior: EffectPrior,
  y: ArrayLike<number>,
  s: ArrayLike<number>,
  threshold: number,
): Float64Array {
  if (y.length < threadedPosteriorRows) return posteriorProbabilityAboveColumn(prior, y, s, threshold);
  validateProbabilityAboveInputs(y, s, threshold);
  const sharedY = sharedFloat64(y);
  const sharedS = sharedFloat64(s);
  const out = new Float64Array(new SharedArrayBuffer(8 * y.length));
  const chunks = createSharedChunks(y.length);
  helperThread()
    ?.run<null>({ kind: "above", prior, threshold, y: sharedY, s: sharedS, out, chunks })
    .catch(() => null);
  writeChunksHere(chunks, (from, to) =>
    writeProbabilityAboveRows(prior, sharedY, sharedS, threshold, out, from, to),
  );
  return out;
}

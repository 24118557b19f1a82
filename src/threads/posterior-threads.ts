/**
 * posteriorColumns on two threads: the calling thread and the process's helper thread
 * (helper-thread.ts) write the rows chunk by chunk. The calling thread starts at once and yields
 * between chunks (so that other requests are served meanwhile); whatever chunk the
 * helper claimed but did not finish, because it failed, is written here afterwards. Each row
 * depends on its own (y, s) only, so the columns are the same as posteriorColumns' (a test checks).
 */
import type { EffectPrior } from "../stats/effect-prior.ts";
import {
  emptyPosteriorColumns,
  type PosteriorColumns,
  posteriorColumnCount,
  posteriorColumns,
  validatePosteriorInputs,
  writePosteriorRows,
} from "../stats/posterior.ts";
import { helperThread, sharedFloat64 } from "./helper-thread.ts";
import { chunkRange, createSharedChunks, unwrittenChunks, workOnNextChunk } from "./shared-chunks.ts";

/** Below this many rows one thread is faster than sharing (the helper's start costs ~0.15 s once). */
export const threadedPosteriorRows = 50_000;
const chunkRows = 8192;

const yieldToEventLoop = (): Promise<void> => new Promise((resolve) => setImmediate(resolve));

export async function posteriorColumnsOnThreads(
  prior: EffectPrior,
  y: ArrayLike<number>,
  s: ArrayLike<number>,
  level: number,
  options: {
    /** Told how many of the chunks the helper thread wrote (0 when it was not up in time). */
    readonly onShare?: (share: { readonly chunks: number; readonly byHelper: number }) => void;
  } = {},
): Promise<PosteriorColumns> {
  if (y.length < threadedPosteriorRows) return posteriorColumns(prior, y, s, level);
  validatePosteriorInputs(y, s, level);
  const rows = y.length;
  const sharedY = sharedFloat64(y);
  const sharedS = sharedFloat64(s);
  const buffers = Array.from({ length: posteriorColumnCount }, () => new SharedArrayBuffer(8 * rows));
  const columns = emptyPosteriorColumns(rows, level, buffers);
  const chunks = createSharedChunks(rows, chunkRows);
  // Posted at once: the helper takes it when it is up, and finds nothing left if this thread was faster.
  const helperJob = helperThread()
    ?.run<null>({ kind: "posteriors", prior, level, y: sharedY, s: sharedS, columns: buffers, chunks })
    .catch(() => null);
  let writtenHere = 0;
  const write = (from: number, to: number) => {
    writePosteriorRows(prior, sharedY, sharedS, columns, from, to);
    writtenHere++;
  };
  while (workOnNextChunk(chunks, write)) await yieldToEventLoop();
  if (unwrittenChunks(chunks).length > 0) {
    // The helper holds chunks: wait for it (it finishes them, or fails and they are written here).
    await helperJob;
    for (const chunk of unwrittenChunks(chunks)) write(...chunkRange(chunks, chunk));
  }
  options.onShare?.({ chunks: chunks.done.length, byHelper: chunks.done.length - writtenHere });
  return columns;
}

/**
 * Rows split into chunks that two threads claim one at a time from a shared Atomics counter, each
 * finished chunk marked in a shared flag array, so both threads keep busy until none are left and
 * the caller can tell which chunks a failed helper left unwritten.
 */
export interface SharedChunks {
  readonly rows: number;
  readonly chunkRows: number;
  /** Int32Array(1) over a SharedArrayBuffer: the next chunk to claim. */
  readonly next: Int32Array;
  /** Int32Array(chunk count) over a SharedArrayBuffer: 1 once a chunk is written. */
  readonly done: Int32Array;
}

/** Rows a chunk (about 10 ms of posteriors or sums: small enough to balance two threads). */
export const defaultChunkRows = 8192;
/**
 * How long a synchronous caller waits for a chunk the helper holds before writing it itself (a
 * chunk takes the helper about 0.01 to 0.1 s; only a stopped helper makes it wait this long).
 */
export const helperPatienceMs = 2000;

/** Writes rows [from, to), chunk number `chunk`. */
export type ChunkWriter = (from: number, to: number, chunk: number) => void;

export function createSharedChunks(rows: number, chunkRows: number = defaultChunkRows): SharedChunks {
  const count = Math.ceil(rows / chunkRows);
  return {
    rows,
    chunkRows,
    next: new Int32Array(new SharedArrayBuffer(4)),
    done: new Int32Array(new SharedArrayBuffer(4 * Math.max(1, count))).subarray(0, count),
  };
}

/** Rows [from, to) of a chunk. */
export function chunkRange(chunks: SharedChunks, chunk: number): [number, number] {
  const from = chunk * chunks.chunkRows;
  return [from, Math.min(chunks.rows, from + chunks.chunkRows)];
}

/** Claims one chunk and writes it; false when none is left. */
export function workOnNextChunk(chunks: SharedChunks, write: ChunkWriter): boolean {
  const chunk = Atomics.add(chunks.next, 0, 1);
  if (chunk >= chunks.done.length) return false;
  const [from, to] = chunkRange(chunks, chunk);
  write(from, to, chunk);
  Atomics.store(chunks.done, chunk, 1);
  Atomics.notify(chunks.done, chunk);
  return true;
}

/**
 * Synchronously, on the calling thread: claims and writes chunks until none are left, then, for
 * each chunk another thread claimed and has not finished, waits up to `patienceMs` for it and
 * writes it here if it is still unfinished (the same rows written twice get the same values, so a
 * late or failed helper costs time, never a wrong result). Returns how many chunks were written here.
 */
export function writeChunksHere(
  chunks: SharedChunks,
  write: ChunkWriter,
  patienceMs: number = helperPatienceMs,
): number {
  let writtenHere = 0;
  while (workOnNextChunk(chunks, write)) writtenHere++;
  for (let chunk = 0; chunk < chunks.done.length; chunk++) {
    if (Atomics.load(chunks.done, chunk) === 1) continue;
    Atomics.wait(chunks.done, chunk, 0, patienceMs);
    if (Atomics.load(chunks.done, chunk) === 1) continue;
    write(...chunkRange(chunks, chunk), chunk);
    Atomics.store(chunks.done, chunk, 1);
    writtenHere++;
  }
  return writtenHere;
}

/** The chunks not marked written. */
export function unwrittenChunks(chunks: SharedChunks): number[] {
  const missing: number[] = [];
  for (let chunk = 0; chunk < chunks.done.length; chunk++)
    if (Atomics.load(chunks.done, chunk) !== 1) missing.push(chunk);
  return missing;
}

/** A turn of the event loop (between chunks of an awaited job, so that other work gets served). */
export function yieldToEventLoop(): Promise<void> {
  return new Promise((resolve) => setImmediate(resolve));
}

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

export function createSharedChunks(rows: number, chunkRows: number): SharedChunks {
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
export function workOnNextChunk(chunks: SharedChunks, write: (from: number, to: number) => void): boolean {
  const chunk = Atomics.add(chunks.next, 0, 1);
  if (chunk >= chunks.done.length) return false;
  const [from, to] = chunkRange(chunks, chunk);
  write(from, to);
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
  write: (from: number, to: number) => void,
  patienceMs: number,
): number {
  let writtenHere = 0;
  while (workOnNextChunk(chunks, write)) writtenHere++;
  for (let chunk = 0; chunk < chunks.done.length; chunk++) {
    if (Atomics.load(chunks.done, chunk) === 1) continue;
    Atomics.wait(chunks.done, chunk, 0, patienceMs);
    if (Atomics.load(chunks.done, chunk) === 1) continue;
    write(...chunkRange(chunks, chunk));
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

/**
 * The chunk protocol between the calling thread and the helper (common practice for work queues
 * over shared memory): every chunk is written once it returns, also one that another thread
 * claimed and never finished.
 */
import { describe, expect, it } from "vitest";
import {
  createSharedChunks,
  unwrittenChunks,
  workOnNextChunk,
  writeChunksHere,
} from "../../src/threads/shared-chunks.ts";

describe("shared chunks", () => {
  it("split rows into chunks covering each row once", () => {
    const chunks = createSharedChunks(10, 4);
    const seen: [number, number][] = [];
    while (workOnNextChunk(chunks, (from, to) => seen.push([from, to])));
    expect(seen).toEqual([
      [0, 4],
      [4, 8],
      [8, 10],
    ]);
    expect(unwrittenChunks(chunks)).toEqual([]);
  });

  it("write here a chunk another thread claimed and left unfinished, after waiting for it", () => {
    const chunks = createSharedChunks(100, 10);
    Atomics.add(chunks.next, 0, 1); // chunk 0 claimed elsewhere, never finished
    const written: number[] = [];
    const here = writeChunksHere(chunks, (from) => written.push(from / 10), 50);
    expect(here).toBe(10);
    expect(written.sort((a, b) => a - b)).toEqual([0, 1, 2, 3, 4, 5, 6, 7, 8, 9]);
    expect(unwrittenChunks(chunks)).toEqual([]);
  });

  it("do not write again a chunk another thread finished", () => {
    const chunks = createSharedChunks(30, 10);
    workOnNextChunk(chunks, () => undefined); // chunk 0 done elsewhere
    const written: number[] = [];
    expect(writeChunksHere(chunks, (from) => written.push(from), 1000)).toBe(2);
    expect(written).toEqual([10, 20]);
  });
});

/**
 * The body of the helper thread (helper-thread.ts), bundled and run there; it does nothing when
 * imported anywhere else. Each job is a pure computation over rows held in SharedArrayBuffers,
 * worked on chunk by chunk (shared-chunks.ts) beside the calling thread.
 */
import { parentPort, workerData } from "node:worker_threads";
import { emptyPosteriorColumns, writePosteriorRows } from "../stats/posterior.ts";
import type { HelperJob, HelperReply } from "./helper-thread.ts";
import { workOnNextChunk } from "./shared-chunks.ts";

function runJob(job: HelperJob): void {
  const columns = emptyPosteriorColumns(job.chunks.rows, job.level, job.columns);
  const write = (from: number, to: number) => writePosteriorRows(job.prior, job.y, job.s, columns, from, to);
  while (workOnNextChunk(job.chunks, write));
}

if (parentPort && (workerData as { role?: string } | null)?.role === "plumbline-helper") {
  const port = parentPort;
  port.on("message", (job: HelperJob) => {
    try {
      runJob(job);
      port.postMessage({ jobId: job.jobId, kind: "done" } satisfies HelperReply);
    } catch (error) {
      const message = error instanceof Error ? error.message : String(error);
      port.postMessage({ jobId: job.jobId, kind: "error", message } satisfies HelperReply);
    }
  });
}

/**
 * The body of the helper thread (helper-thread.ts), bundled and run there; it does nothing when
 * imported anywhere else. It runs one job at a time (helper-jobs.ts) and answers with its result.
 */
import { parentPort, workerData } from "node:worker_threads";
import { type HelperJob, runHelperJob } from "./helper-jobs.ts";
import type { HelperReply } from "./helper-thread.ts";

if (parentPort && (workerData as { role?: string } | null)?.role === "plumbline-helper") {
  const port = parentPort;
  port.on("message", ({ jobId, job }: { jobId: number; job: HelperJob }) => {
    try {
      const progress = (value: unknown) =>
        port.postMessage({ jobId, kind: "progress", value } satisfies HelperReply);
      const value = runHelperJob(job, progress);
      port.postMessage({ jobId, kind: "done", value } satisfies HelperReply);
    } catch (error) {
      const message = error instanceof Error ? error.message : String(error);
      port.postMessage({ jobId, kind: "error", message } satisfies HelperReply);
    }
  });
}

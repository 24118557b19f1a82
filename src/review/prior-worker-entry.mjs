// Entry of the prior worker thread (prior-worker.ts). A worker does not inherit the module hooks
// through which the main thread imports TypeScript, so it registers them itself first.
import { register } from "tsx/esm/api";

register();
await import("./prior-worker.ts");

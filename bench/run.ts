/**
 * `npm run bench`: runs every bench/<area>.ts module's exported `run...Bench()` in this one
 * process and prints one JSON document. Each module measures plumbline's code beside a baseline
 * run in the same process and reports ratios, so the figures compare across machines.
 * `npm run bench -- fit review` runs only the named areas.
 */
import { readdirSync } from "node:fs";
import { cpus, totalmem } from "node:os";
import { dirname, join } from "node:path";
import { fileURLToPath, pathToFileURL } from "node:url";

const folder = dirname(fileURLToPath(import.meta.url));
const wanted = new Set(process.argv.slice(2));
const modules = readdirSync(folder)
  .filter((file) => file.endsWith(".ts") && file !== "run.ts" && !file.startsWith("_"))
  .map((file) => file.replace(/\.ts$/, ""))
  .filter((area) => wanted.size === 0 || wanted.has(area))
  .sort();

const report: Record<string, unknown> = {
  machine: {
    node: process.version,
    cpus: cpus().length,
    cpuModel: cpus()[0]?.model ?? "unknown",
    memoryGiB: Math.round((totalmem() / 2 ** 30) * 10) / 10,
  },
  startedAt: new Date().toISOString(),
  areas: {},
};
const areas = report.areas as Record<string, unknown>;

for (const area of modules) {
  const loaded = (await import(pathToFileURL(join(folder, `${area}.ts`)).href)) as Record<string, unknown>;
  for (const [name, exported] of Object.entries(loaded)) {
    if (!/^run.*Bench$/.test(name) || typeof exported !== "function") continue;
    process.stderr.write(`bench: ${area} (${name})...\n`);
    const started = performance.now();
    areas[area] = await (exported as () => Promise<unknown>)();
    process.stderr.write(`bench: ${area} done in ${((performance.now() - started) / 1000).toFixed(1)} s\n`);
  }
}

process.stdout.write(`${JSON.stringify(report, null, 2)}\n`);

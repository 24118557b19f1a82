/**
 * The pages' static files, read from the repository: web/pages/*.ts and web/charts/*.ts turned
 * into browser JavaScript on request by esbuild's transform (types stripped, imports left as they
 * are, so `./common.ts` is fetched from the same folder), web/styles.css, and the vega bundles
 * from node_modules so that charts draw without any network. Transpiled text is cached by the
 * file's modification time: an edited page is picked up without a restart.
 */
import { existsSync } from "node:fs";
import { readFile, stat } from "node:fs/promises";
import { dirname, join, resolve } from "node:path";
import { fileURLToPath } from "node:url";
import { transform } from "esbuild";

const sourceDirectory = dirname(fileURLToPath(import.meta.url));
/** The repository root: src/web/ is two levels below it. */
export const webRoot = resolve(sourceDirectory, "..", "..", "web");

/** The client folders whose .ts files are served, by URL segment. */
const scriptFolders: Readonly<Record<string, string>> = {
  pages: join(webRoot, "pages"),
  charts: join(webRoot, "charts"),
};

/** The vega bundles the pages load, by served file name: [package, file inside the package]. */
export const vendorFiles: Readonly<Record<string, readonly [string, string]>> = {
  "vega.min.js": ["vega", "build/vega.min.js"],
  "vega-lite.min.js": ["vega-lite", "build/vega-lite.min.js"],
  "vega-embed.min.js": ["vega-embed", "build/vega-embed.min.js"],
};

export interface Asset {
  readonly body: string;
  readonly contentType: string;
}

/** File names are single path segments of letters, digits and dashes: nothing can climb out. */
const safeName = /^[a-z0-9][a-z0-9-]*\.ts$/;

const transpiled = new Map<string, { modified: number; body: string }>();

/** A client module as JavaScript, or undefined when there is no such file. */
export async function clientScript(folder: string, name: string): Promise<Asset | undefined> {
  const directory = scriptFolders[folder];
  if (directory === undefined || !safeName.test(name)) return undefined;
  const path = join(directory, name);
  let modified: number;
  try {
    modified = (await stat(path)).mtimeMs;
  } catch {
    return undefined;
  }
  const cached = transpiled.get(path);
  if (cached && cached.modified === modified) return { body: cached.body, contentType: javascriptType };
  const source = await readFile(path, "utf8");
  const result = await transform(source, {
    loader: "ts",
    format: "esm",
    target: "es2022",
    sourcefile: `/app/assets/${folder}/${name}`,
    sourcemap: "inline",
  });
  transpiled.set(path, { modified, body: result.code });
  return { body: result.code, contentType: javascriptType };
}

const javascriptType = "text/javascript; charset=utf-8";

export async function stylesheet(): Promise<Asset> {
  return {
    body: await readFile(join(webRoot, "styles.css"), "utf8"),
    contentType: "text/css; charset=utf-8",
  };
}

const vendorCache = new Map<string, string>();

/** A vega bundle, found in the nearest node_modules above this file (hoisted installs too). */
export async function vendorScript(name: string): Promise<Asset | undefined> {
  const entry = vendorFiles[name];
  if (entry === undefined) return undefined;
  let body = vendorCache.get(name);
  if (body === undefined) {
    const path = findPackageFile(entry[0], entry[1]);
    if (path === undefined) return undefined;
    body = await readFile(path, "utf8");
    vendorCache.set(name, body);
  }
  return { body, contentType: javascriptType };
}

function findPackageFile(packageName: string, file: string): string | undefined {
  // The packages' "exports" maps hide their build folders from require.resolve, so walk up.
  let directory = sourceDirectory;
  for (;;) {
    const candidate = join(directory, "node_modules", packageName, file);
    if (existsSync(candidate)) return candidate;
    const parent = dirname(directory);
    if (parent === directory) return undefined;
    directory = parent;
  }
}

/**
 * The web sub-app in process (no browser): every page answers with its shell, every module a
 * page loads (and every module those import) is served as JavaScript, names that could climb out
 * of the asset folders are refused, and the site icon is a well-formed ICO.
 */
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { createApp } from "../../src/api/app.ts";
import { webPageList } from "../../src/web/page-shell.ts";
import { createTestDb } from "../helpers/db.ts";

describe("the web pages' sub-app", () => {
  let handle: Awaited<ReturnType<typeof createTestDb>>;
  let app: ReturnType<typeof createApp>;

  beforeAll(async () => {
    handle = await createTestDb();
    app = createApp({ db: handle.db });
  });

  afterAll(() => handle?.dispose());

  it("answers each page with a shell that loads its module and the vega bundles", async () => {
    for (const page of webPageList) {
      const response = await app.request(`/app/${page.path}`);
      expect(response.status, page.path).toBe(200);
      const html = await response.text();
      expect(html).toContain(`<script type="module" src="/app/assets/pages/${page.script}"></script>`);
      for (const bundle of ["vega.min.js", "vega-lite.min.js", "vega-embed.min.js"])
        expect(html).toContain(`/app/assets/vendor/${bundle}`);
      // The standing caution is on every page, whatever the page's own notes say.
      expect(html).toContain("not for clinical or safety-critical decisions");
    }
    const root = await app.request("/app");
    expect(root.status).toBe(302);
    expect(root.headers.get("location")).toBe("/app/review");
  });

  it("serves every module the pages import, transitively, as JavaScript without types", async () => {
    const pending = webPageList.map((page) => `/app/assets/pages/${page.script}`);
    const seen = new Set<string>();
    while (pending.length > 0) {
      const path = pending.pop()!;
      if (seen.has(path)) continue;
      seen.add(path);
      const response = await app.request(path);
      expect(response.status, path).toBe(200);
      expect(response.headers.get("content-type"), path).toMatch(/^text\/javascript/);
      const code = await response.text();
      expect(code, path).not.toMatch(/^import type /m);
      for (const match of code.matchAll(/^import\s[^"]*?from\s+"(\.{1,2}\/[^"]+)"/gm)) {
        pending.push(new URL(match[1]!, `http://pages${path}`).pathname);
      }
    }
    // The chart specs of web/charts/ come along with the review page.
    expect([...seen].some((path) => path.startsWith("/app/assets/charts/"))).toBe(true);
  });

  it("refuses names outside the asset folders", async () => {
    for (const path of [
      "/app/assets/pages/..%2F..%2Fpackage.json",
      "/app/assets/pages/common.js",
      "/app/assets/src/server.ts",
      "/app/assets/vendor/jstat.min.js",
      "/app/assets/pages/missing-page.ts",
    ]) {
      const response = await app.request(path);
      expect(response.status, path).toBe(404);
    }
  });

  it("serves a 16 x 16, 32-bit ICO at /favicon.ico", async () => {
    const response = await app.request("/favicon.ico");
    expect(response.status).toBe(200);
    expect(response.headers.get("content-type")).toBe("image/x-icon");
    const bytes = Buffer.from(await response.arrayBuffer());
    // Layout from Microsoft's "Icons" documentation: ICONDIR, ICONDIRENTRY, BITMAPINFOHEADER.
    expect([bytes.readUInt16LE(0), bytes.readUInt16LE(2), bytes.readUInt16LE(4)]).toEqual([0, 1, 1]);
    expect([bytes[6], bytes[7], bytes.readUInt16LE(12)]).toEqual([16, 16, 32]);
    const imageBytes = bytes.readUInt32LE(14);
    const offset = bytes.readUInt32LE(18);
    expect(offset + imageBytes).toBe(bytes.length);
    expect(bytes.readUInt32LE(offset)).toBe(40);
    // The bitmap's height counts the colour rows and the AND-mask rows together.
    expect([bytes.readInt32LE(offset + 4), bytes.readInt32LE(offset + 8)]).toEqual([16, 32]);
    let opaque = 0;
    for (let pixel = 0; pixel < 256; pixel += 1) if (bytes[offset + 40 + pixel * 4 + 3] === 0xff) opaque += 1;
    expect(opaque).toBeGreaterThan(20);
    expect(opaque).toBeLessThan(256);
  });
});

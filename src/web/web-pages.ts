/**
 * The pages people open in a browser, as one Hono sub-app mounted at the root of the service:
 * /app/<page> (sign in, test history, program review, defaults, backlog forecast), their
 * assets under /app/assets/ and the site icon at /favicon.ico. The pages are shells; the data
 * comes from /api/v1 with the token the person pasted, so the pages need no session of their own.
 */
import { Hono } from "hono";
import type { AppDeps } from "../api/context.ts";
import { renderFavicon } from "./favicon.ts";
import { renderPageShell, webPageList } from "./page-shell.ts";
import { clientScript, stylesheet, vendorScript } from "./static-assets.ts";

/** Kept short so that an edited page shows on reload; the vega bundles change only on install. */
const scriptCache = "no-cache";
const vendorCache = "public, max-age=86400";

// The pages read everything through the API; deps is taken for the same shape as the routes.
export function webPages(_deps: AppDeps): Hono {
  const favicon = renderFavicon();
  const app = new Hono();
  app.get("/favicon.ico", (c) => {
    c.header("Content-Type", "image/x-icon");
    c.header("Cache-Control", vendorCache);
    return c.body(favicon.slice().buffer, 200);
  });
  app.get("/app", (c) => c.redirect("/app/review", 302));
  for (const page of webPageList) {
    const html = renderPageShell(page);
    app.get(`/app/${page.path}`, (c) => c.html(html, 200));
  }
  app.get("/app/assets/styles.css", async (c) => {
    const asset = await stylesheet();
    c.header("Content-Type", asset.contentType);
    c.header("Cache-Control", scriptCache);
    return c.body(asset.body, 200);
  });
  app.get("/app/assets/vendor/:name", async (c) => {
    const asset = await vendorScript(c.req.param("name"));
    if (asset === undefined) return c.text("no such file", 404);
    c.header("Content-Type", asset.contentType);
    c.header("Cache-Control", vendorCache);
    return c.body(asset.body, 200);
  });
  app.get("/app/assets/:folder/:name", async (c) => {
    const asset = await clientScript(c.req.param("folder"), c.req.param("name"));
    if (asset === undefined) return c.text("no such file", 404);
    c.header("Content-Type", asset.contentType);
    c.header("Cache-Control", scriptCache);
    return c.body(asset.body, 200);
  });
  return app;
}

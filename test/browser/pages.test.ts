/**
 * The pages a person opens, in a real browser: Debian's chromium driven by playwright-core
 * (.ci/run installs chromium; nothing downloads a browser). The server runs in this process
 * on a free loopback port with the demo workspace loaded.
 */
import { existsSync } from "node:fs";
import { type Browser, chromium } from "playwright-core";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { loadDemoWorkspace } from "../../src/demo/load-demo.ts";
import { type RunningServer, startServer } from "../../src/server.ts";
import { createTestDb } from "../helpers/db.ts";

const chromiumPath = process.env.PLUMBLINE_CHROMIUM ?? "/usr/bin/chromium";

// The flags keep a root, offline chromium from reaching for the network (see .ci/run).
const launchArguments = [
  "--no-sandbox",
  "--disable-gpu",
  "--disable-quic",
  "--no-first-run",
  "--disable-background-networking",
  "--disable-component-update",
  "--disable-sync",
];

describe("pages in a real browser", () => {
  let handle: Awaited<ReturnType<typeof createTestDb>>;
  let server: RunningServer;
  let browser: Browser;
  let token: string;

  beforeAll(async () => {
    if (!existsSync(chromiumPath)) {
      throw new Error(`chromium not found at ${chromiumPath}: run .ci/run or apt-get install chromium`);
    }
    handle = await createTestDb();
    const demo = await loadDemoWorkspace(handle.db);
    token = demo.token;
    server = await startServer({ db: handle.db, port: 0, hostname: "127.0.0.1" });
    browser = await chromium.launch({ executablePath: chromiumPath, headless: true, args: launchArguments });
  });

  afterAll(async () => {
    await browser?.close();
    await server?.close();
    handle?.dispose();
  });

  async function openPage(path: string) {
    const page = await browser.newPage();
    const problems: string[] = [];
    page.on("console", (message) => {
      if (message.type() === "error") problems.push(message.text());
    });
    page.on("pageerror", (error) => problems.push(error.message));
    page.on("response", (response) => {
      if (response.status() >= 400) problems.push(`${response.status()} ${response.url()}`);
    });
    const response = await page.goto(`${server.url}${path}`);
    return { page, response, problems };
  }

  it("the landing page links to the API reference", async () => {
    const { page, response, problems } = await openPage("/");
    expect(response?.status()).toBe(200);
    await page
      .getByRole("link", { name: /API reference/i })
      .first()
      .click();
    await page.waitForURL(/\/api\/reference/);
    expect(problems).toEqual([]);
    await page.close();
  });

  it("the landing page opens the web pages at sign-in", async () => {
    const { page, problems } = await openPage("/");
    await page.getByRole("link", { name: /Open plumbline/i }).click();
    await page.waitForURL(/\/app\/sign-in/);
    expect(problems).toEqual([]);
    await page.close();
  });

  it("the API reference lists the versioned routes from the OpenAPI document", async () => {
    const { page, response, problems } = await openPage("/api/reference");
    expect(response?.status()).toBe(200);
    const text = await page.textContent("body");
    expect(text).toContain("/api/v1/experiments");
    expect(problems).toEqual([]);
    await page.close();
  });

  it("a demo token reads the experiments through the API from the page's origin", async () => {
    const { page } = await openPage("/");
    const total = await page.evaluate(async (bearer) => {
      const response = await fetch("/api/v1/experiments?limit=1", {
        headers: { Authorization: `Bearer ${bearer}` },
      });
      return ((await response.json()) as { total: number }).total;
    }, token);
    expect(total).toBeGreaterThan(500);
    await page.close();
  });
});

/**
 * The HTML every page shares: the header with the workspace and the navigation, a main element
 * the page's module fills, and the standing caution in the footer. The pages hold no data of
 * their own: each module asks the API with the token kept in sessionStorage.
 */

export interface WebPage {
  /** The path under /app, e.g. "review". */
  readonly path: string;
  /** The heading and the navigation label. */
  readonly title: string;
  /** The module in web/pages/ that fills the page. */
  readonly script: string;
  /** One line under the heading saying what the page is for. */
  readonly purpose: string;
  /** Left out of the navigation (the sign-in page). */
  readonly hidden?: boolean;
}

export const webPageList: readonly WebPage[] = [
  {
    path: "sign-in",
    title: "Sign in",
    script: "sign-in.ts",
    purpose: "Paste an API token of your workspace. It is kept in this browser tab only.",
    hidden: true,
  },
  {
    path: "tests",
    title: "Test history",
    script: "test-history.ts",
    purpose: "Every experiment of the workspace with its primary lift and the checks that flag it.",
  },
  {
    path: "review",
    title: "Program review",
    script: "program-review.ts",
    purpose:
      "What the history says about the program as a whole: how many wins were real, how much the claimed lift will shrink, what was missed.",
  },
  {
    path: "defaults",
    title: "Defaults",
    script: "defaults.ts",
    purpose:
      "The alpha, sample size and run length that pay for themselves, against the textbook design and the one the teams use now.",
  },
  {
    path: "backlog",
    title: "Backlog forecast",
    script: "backlog-forecast.ts",
    purpose:
      "What the planned tests will realistically deliver, under the current launch rule and the recommended one.",
  },
];

function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (character) => `&#${character.charCodeAt(0)};`);
}

export function renderPageShell(page: WebPage): string {
  const navigation = webPageList
    .filter((entry) => !entry.hidden)
    .map(
      (entry) =>
        `<li><a href="/app/${entry.path}"${entry.path === page.path ? ' aria-current="page"' : ""}>${escapeHtml(entry.title)}</a></li>`,
    )
    .join("");
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${escapeHtml(page.title)} · plumbline</title>
<link rel="icon" href="/favicon.ico">
<link rel="stylesheet" href="/app/assets/styles.css">
<script src="/app/assets/vendor/vega.min.js" defer></script>
<script src="/app/assets/vendor/vega-lite.min.js" defer></script>
<script src="/app/assets/vendor/vega-embed.min.js" defer></script>
<script type="module" src="/app/assets/pages/${escapeHtml(page.script)}"></script>
</head>
<body data-page="${escapeHtml(page.path)}">
<a class="skip-link" href="#main">Skip to the content</a>
<header class="site-header">
<a class="brand" href="/app/review">plumbline</a>
<nav aria-label="Pages"><ul class="nav-list">${navigation}</ul></nav>
<div class="session" id="session" aria-live="polite"></div>
</header>
<main id="main" tabindex="-1">
<h1>${escapeHtml(page.title)}</h1>
<p class="purpose">${escapeHtml(page.purpose)}</p>
<div id="page" aria-busy="true"><p class="loading">Loading…</p></div>
</main>
<footer class="site-footer">
<p>Every figure here is an estimate that rests on the assumptions listed beside it. It does not
replace a statistician's review, and it is not for clinical or safety-critical decisions.</p>
<p><a href="/api/reference">API reference</a></p>
</footer>
</body>
</html>
`;
}

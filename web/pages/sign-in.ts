/**
 * Sign in: the token is checked against GET /api/v1/workspace, then kept in sessionStorage
 * (this tab only, gone when it closes) and never put in an address.
 */
import {
  el,
  errorBox,
  fetchWorkspace,
  field,
  formatInteger,
  pageRoot,
  renderSession,
  storedToken,
  storeToken,
} from "./common.ts";

const pageLinks: readonly (readonly [string, string, string])[] = [
  ["/app/review", "Program review", "how many wins were real, and how much lift to expect"],
  ["/app/tests", "Test history", "every experiment with its lift and flags"],
  ["/app/defaults", "Defaults", "alpha, sample size and run length worth using"],
  ["/app/backlog", "Backlog forecast", "what the planned tests will deliver"],
];

function nextPage(): string {
  const next = new URLSearchParams(location.search).get("next");
  // Only paths of this site: a pasted link must not send the person elsewhere after sign-in.
  return next?.startsWith("/app/") ? next : "/app/review";
}

function signedIn(workspace: Awaited<ReturnType<typeof fetchWorkspace>>): HTMLElement {
  const counts = workspace.counts;
  return el(
    "section",
    { class: "signed-in", "aria-labelledby": "signed-in-heading" },
    el(
      "h2",
      { id: "signed-in-heading" },
      "Signed in to ",
      el("span", { "data-workspace-name": "" }, workspace.name),
    ),
    workspace.description ? el("p", {}, workspace.description) : null,
    el(
      "p",
      {},
      `Role: ${workspace.caller.role}. The workspace holds ${formatInteger(counts.experiments)} experiments, `,
      `${formatInteger(counts.results)} results and ${formatInteger(counts.realizedMeasurements)} realized measurements.`,
    ),
    el(
      "ul",
      { class: "page-links" },
      pageLinks.map(([href, title, what]) => el("li", {}, el("a", { href }, title), `: ${what}`)),
    ),
  );
}

async function run(): Promise<void> {
  renderSession();
  const root = pageRoot();
  const status = el("div", { id: "sign-in-status", "aria-live": "polite" });
  const tokenInput = el("input", {
    id: "token",
    name: "token",
    type: "password",
    autocomplete: "off",
    spellcheck: "false",
    required: true,
    placeholder: "plb_…",
  });
  const form = el(
    "form",
    { class: "sign-in", novalidate: true },
    field(
      "API token",
      tokenInput,
      "A read token is enough for every page. An operator creates tokens with plumbline token create.",
    ),
    el("div", { class: "actions" }, el("button", { type: "submit" }, "Sign in")),
  );
  form.addEventListener("submit", async (event) => {
    event.preventDefault();
    const token = tokenInput.value.trim();
    if (token === "") {
      status.replaceChildren(el("p", { class: "error", role: "alert" }, "Paste a token first."));
      tokenInput.focus();
      return;
    }
    status.replaceChildren(el("p", { class: "loading", role: "status" }, "Checking the token…"));
    try {
      const workspace = await fetchWorkspace(token);
      storeToken(token, workspace.name);
      tokenInput.value = "";
      renderSession();
      status.replaceChildren(signedIn(workspace));
      const next = nextPage();
      if (new URLSearchParams(location.search).has("next")) location.assign(next);
    } catch (error) {
      status.replaceChildren(errorBox(error));
    }
  });
  root.replaceChildren(form, status);
  root.setAttribute("aria-busy", "false");
  if (storedToken() !== null) {
    try {
      status.replaceChildren(signedIn(await fetchWorkspace()));
    } catch (error) {
      status.replaceChildren(errorBox(error));
    }
  } else tokenInput.focus();
}

void run();

/**
 * What every page shares in the browser: the token (sessionStorage, never the URL), calls to
 * /api/v1 that turn the error envelope `{ error: { code, message, issues } }` into a plain
 * message, loading states, number formats, tables, the assumptions and cautions block, charts
 * drawn by vega-embed from the bundles the service itself serves, and downloads as blobs.
 */

declare global {
  interface Window {
    vegaEmbed?: (
      element: HTMLElement,
      spec: unknown,
      options?: Record<string, unknown>,
    ) => Promise<{ view: { finalize(): void } }>;
  }
}

const tokenKey = "plumbline.token";
const workspaceKey = "plumbline.workspace";

export function storedToken(): string | null {
  return sessionStorage.getItem(tokenKey);
}

export function storeToken(token: string, workspaceName: string): void {
  sessionStorage.setItem(tokenKey, token);
  sessionStorage.setItem(workspaceKey, workspaceName);
}

export function forgetToken(): void {
  sessionStorage.removeItem(tokenKey);
  sessionStorage.removeItem(workspaceKey);
}

/** The token, or a trip to the sign-in page that comes back here afterwards. */
export function requireToken(): string | null {
  const token = storedToken();
  if (token === null) {
    const back = `${location.pathname}${location.search}`;
    location.replace(`/app/sign-in?next=${encodeURIComponent(back)}`);
  }
  return token;
}

export interface ErrorIssue {
  readonly path: string;
  readonly message: string;
  readonly row?: number;
}

/** A failed API call, carrying the envelope's code, message and issues. */
export class ApiFailure extends Error {
  readonly status: number;
  readonly code: string;
  readonly issues: readonly ErrorIssue[];
  constructor(status: number, code: string, message: string, issues: readonly ErrorIssue[] = []) {
    super(message);
    this.name = "ApiFailure";
    this.status = status;
    this.code = code;
    this.issues = issues;
  }
}

async function failureOf(response: Response): Promise<ApiFailure> {
  const text = await response.text();
  try {
    const body = JSON.parse(text) as { error?: { code?: string; message?: string; issues?: ErrorIssue[] } };
    if (body.error?.message)
      return new ApiFailure(
        response.status,
        body.error.code ?? "error",
        body.error.message,
        body.error.issues ?? [],
      );
  } catch {
    // Not the envelope (a proxy's page, say): fall through to the status line.
  }
  return new ApiFailure(
    response.status,
    "http_error",
    `the server answered ${response.status} ${response.statusText}`,
  );
}

async function send(path: string, init: RequestInit = {}, token = storedToken()): Promise<Response> {
  const headers = new Headers(init.headers);
  if (token !== null) headers.set("Authorization", `Bearer ${token}`);
  if (init.body !== undefined && !headers.has("Content-Type"))
    headers.set("Content-Type", "application/json");
  let response: Response;
  try {
    response = await fetch(path, { ...init, headers });
  } catch (error) {
    throw new ApiFailure(0, "network", `the service did not answer (${(error as Error).message})`);
  }
  if (!response.ok) throw await failureOf(response);
  return response;
}

/** GET or POST to the API and read JSON; a failure throws ApiFailure with the server's message. */
export async function apiJson<T>(path: string, init: RequestInit = {}, token?: string): Promise<T> {
  const response = await send(path, init, token ?? storedToken());
  return (await response.json()) as T;
}

/** Fetches a file with the token header and hands it to the browser as a download. */
export async function downloadFile(path: string, fileName: string): Promise<void> {
  const response = await send(path);
  const blob = await response.blob();
  const address = URL.createObjectURL(blob);
  const link = document.createElement("a");
  link.href = address;
  link.download = fileName;
  document.body.append(link);
  link.click();
  link.remove();
  // Revoked later: some browsers read the blob after click() returns.
  setTimeout(() => URL.revokeObjectURL(address), 10_000);
}

type Child = Node | string | number | null | undefined | false;

/** Builds an element; attributes starting with "on" are listeners, the rest set as attributes. */
export function el<K extends keyof HTMLElementTagNameMap>(
  tag: K,
  attributes: Record<string, string | number | boolean | EventListener | undefined> = {},
  ...children: (Child | Child[])[]
): HTMLElementTagNameMap[K] {
  const element = document.createElement(tag);
  for (const [name, value] of Object.entries(attributes)) {
    if (value === undefined || value === false) continue;
    if (typeof value === "function") element.addEventListener(name.slice(2), value);
    else element.setAttribute(name, value === true ? "" : String(value));
  }
  for (const child of children.flat()) {
    if (child === null || child === undefined || child === false) continue;
    element.append(typeof child === "object" ? child : String(child));
  }
  return element;
}

/** The error box: what the server said, plainly, with each field it named. */
export function errorBox(error: unknown): HTMLElement {
  const failure =
    error instanceof ApiFailure
      ? error
      : new ApiFailure(0, "error", error instanceof Error ? error.message : String(error));
  const issues = failure.issues.filter((issue) => issue.message !== failure.message || issue.path);
  const box = el(
    "div",
    { class: "error", role: "alert" },
    el("p", {}, el("strong", {}, failureTitle(failure)), " ", failure.message),
    issues.length > 0
      ? el(
          "ul",
          {},
          issues.map((issue) =>
            el(
              "li",
              {},
              el("code", {}, issue.row === undefined ? issue.path : `row ${issue.row}, ${issue.path}`),
              ": ",
              issue.message,
            ),
          ),
        )
      : null,
  );
  if (failure.status === 401)
    box.append(
      el(
        "p",
        {},
        el("a", { href: `/app/sign-in?next=${encodeURIComponent(location.pathname)}` }, "Sign in again"),
      ),
    );
  return box;
}

function failureTitle(failure: ApiFailure): string {
  switch (failure.status) {
    case 0:
      return "Could not reach the service.";
    case 401:
      return "The token was not accepted.";
    case 403:
      return "This token's role may not do that.";
    case 400:
      return "Some inputs were refused.";
    case 422:
      return "This cannot be computed from these inputs.";
    default:
      return failure.status >= 500 ? "The service failed." : "The request failed.";
  }
}

/** Replaces the content of `target` with a loading line while `work` runs, then with its result. */
export async function withLoading(
  target: HTMLElement,
  message: string,
  work: () => Promise<Node | Node[]>,
): Promise<boolean> {
  target.setAttribute("aria-busy", "true");
  target.replaceChildren(el("p", { class: "loading", role: "status" }, message));
  try {
    const content = await work();
    target.replaceChildren(...(Array.isArray(content) ? content : [content]));
    return true;
  } catch (error) {
    target.replaceChildren(errorBox(error));
    return false;
  } finally {
    target.setAttribute("aria-busy", "false");
  }
}

const dash = "–";

export function formatPercent(value: number | null | undefined, digits = 1): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return dash;
  return `${(value * 100).toFixed(digits)} %`;
}

export function formatSignedPercent(value: number | null | undefined, digits = 2): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return dash;
  const text = (value * 100).toFixed(digits);
  return `${value > 0 && Number(text) !== 0 ? "+" : ""}${text} %`;
}

export function formatNumber(value: number | null | undefined, digits = 1): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return dash;
  return value.toLocaleString("en-GB", { minimumFractionDigits: digits, maximumFractionDigits: digits });
}

export function formatInteger(value: number | null | undefined): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return dash;
  return Math.round(value).toLocaleString("en-GB");
}

/** Three significant digits for values that span decades (alpha, n). */
export function formatSignificant(value: number | null | undefined, digits = 3): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return dash;
  if (Math.abs(value) >= 10 ** digits) return formatInteger(value);
  return Number(value.toPrecision(digits)).toString();
}

export interface Interval {
  readonly lower: number | null;
  readonly upper: number | null;
  readonly level: number;
}

export function formatInterval(
  interval: Interval | null | undefined,
  format: (value: number | null) => string,
): string {
  if (!interval || interval.lower === null || interval.upper === null) return "";
  return `${Math.round(interval.level * 100)} % interval ${format(interval.lower)} to ${format(interval.upper)}`;
}

export interface Column<Row> {
  readonly header: string;
  readonly cell: (row: Row) => Child | Child[];
  readonly numeric?: boolean;
  /** Long text (names) may wrap; everything else stays on one line. */
  readonly wrap?: boolean;
  /** When given, the header is a button that sorts the rows by this value (null sorts last). */
  readonly sortValue?: (row: Row) => number | string | null;
  /** A longer explanation shown on the header (title attribute). */
  readonly note?: string;
}

/**
 * A table whose column buttons sort every row. With `pageSize`, only that many rows are drawn at
 * first (tens of thousands of rows would hold the browser for seconds), with a button for more;
 * sorting always orders every row and draws the first page again.
 */
export function dataTable<Row>(
  caption: string,
  columns: readonly Column<Row>[],
  rows: readonly Row[],
  options: { readonly pageSize?: number } = {},
): HTMLTableElement {
  const body = el("tbody", {});
  const headers: HTMLTableCellElement[] = [];
  let sortedBy = -1;
  let descending = false;
  const pageSize = options.pageSize ?? Number.POSITIVE_INFINITY;
  const footer = el("tfoot", {});
  let current: readonly Row[] = rows;
  let shown = 0;
  const drawRow = (row: Row) =>
    el(
      "tr",
      {},
      columns.map((column, index) =>
        index === 0
          ? el("th", { scope: "row" }, column.cell(row))
          : el(
              "td",
              { class: column.numeric ? "numeric" : column.wrap ? "wrap" : undefined },
              column.cell(row),
            ),
      ),
    );
  const drawFooter = () => {
    if (shown >= current.length) {
      footer.replaceChildren();
      return;
    }
    const more = Math.min(pageSize, current.length - shown);
    footer.replaceChildren(
      el(
        "tr",
        {},
        el(
          "td",
          { colspan: columns.length },
          `${formatInteger(shown)} of ${formatInteger(current.length)} rows shown. `,
          el(
            "button",
            {
              type: "button",
              class: "secondary",
              onclick: () => {
                body.append(...current.slice(shown, shown + more).map(drawRow));
                shown += more;
                drawFooter();
              },
            },
            `Show ${formatInteger(more)} more`,
          ),
        ),
      ),
    );
  };
  const render = (ordered: readonly Row[]) => {
    current = ordered;
    shown = Math.min(pageSize, ordered.length);
    body.replaceChildren(...ordered.slice(0, shown).map(drawRow));
    drawFooter();
  };
  const sortBy = (index: number) => {
    const key = columns[index]?.sortValue;
    if (!key) return;
    // A second press on the same column turns the order round; a new column starts descending.
    descending = sortedBy === index ? !descending : true;
    sortedBy = index;
    const direction = descending ? -1 : 1;
    const ordered = [...rows].sort((left, right) => {
      const a = key(left);
      const b = key(right);
      if (a === b) return 0;
      if (a === null) return 1; // missing values last, whichever the direction
      if (b === null) return -1;
      return (a < b ? -1 : 1) * direction;
    });
    headers.forEach((header, headerIndex) => {
      if (headerIndex === index) header.setAttribute("aria-sort", descending ? "descending" : "ascending");
      else header.removeAttribute("aria-sort");
    });
    render(ordered);
  };
  columns.forEach((column, index) => {
    const label = column.sortValue
      ? el("button", { type: "button", class: "sort", onclick: () => sortBy(index) }, column.header)
      : column.header;
    headers.push(
      el("th", { scope: "col", class: column.numeric ? "numeric" : undefined, title: column.note }, label),
    );
  });
  render(rows);
  return el(
    "table",
    { class: "data" },
    el("caption", {}, caption),
    el("thead", {}, el("tr", {}, headers)),
    body,
    footer,
  );
}

/** A headline figure: a label, the value, and a line of detail (the interval, a comparison). */
export function figure(label: string, value: string, detail = "", testId?: string): HTMLElement {
  return el(
    "div",
    { class: "figure", "data-figure": testId },
    el("dt", {}, label),
    el(
      "dd",
      {},
      el("span", { class: "value" }, value),
      detail ? el("span", { class: "detail" }, detail) : null,
    ),
  );
}

export function figureList(figures: HTMLElement[]): HTMLElement {
  return el("dl", { class: "figures" }, figures);
}

/** Assumptions and cautions, always shown open beside the estimates they qualify; cautions first. */
export function notesSection(assumptions: readonly string[], cautions: readonly string[]): HTMLElement {
  return el(
    "section",
    { class: "notes", "aria-labelledby": "notes-heading" },
    el("h2", { id: "notes-heading" }, "Cautions and assumptions"),
    el(
      "div",
      { class: "notes-columns" },
      el(
        "div",
        { class: "cautions" },
        el("h3", {}, "Cautions"),
        el(
          "ul",
          {},
          cautions.map((text) => el("li", {}, text)),
        ),
      ),
      el(
        "div",
        {},
        el("h3", {}, "Assumptions"),
        el(
          "ul",
          {},
          assumptions.map((text) => el("li", {}, text)),
        ),
      ),
    ),
  );
}

async function vegaEmbedReady(): Promise<NonNullable<Window["vegaEmbed"]>> {
  for (let attempt = 0; attempt < 100; attempt += 1) {
    if (window.vegaEmbed) return window.vegaEmbed;
    await new Promise((resolveWait) => setTimeout(resolveWait, 50));
  }
  throw new Error("the chart library did not load");
}

/** A chart drawn as SVG from a vega-lite spec; the description is read out in its place. */
export function chart(spec: Record<string, unknown>, description: string): HTMLElement {
  const holder = el("div", { class: "chart-body" });
  const container = el("figure", { class: "chart" }, holder, el("figcaption", {}, description));
  holder.setAttribute("role", "img");
  holder.setAttribute("aria-label", description);
  vegaEmbedReady()
    .then((embed) => embed(holder, spec, { actions: false, renderer: "svg" }))
    .catch((error: unknown) => holder.replaceChildren(errorBox(error)));
  return container;
}

interface WorkspaceView {
  readonly name: string;
  readonly description: string | null;
  readonly counts: Record<string, number>;
  readonly caller: { readonly role: string };
}

export function fetchWorkspace(token?: string): Promise<WorkspaceView> {
  return apiJson<WorkspaceView>("/api/v1/workspace", {}, token);
}

/** The header's workspace line and sign-out button. */
export function renderSession(): void {
  const holder = document.getElementById("session");
  if (!holder) return;
  const name = sessionStorage.getItem(workspaceKey);
  if (storedToken() === null) {
    holder.replaceChildren(el("a", { href: "/app/sign-in" }, "Sign in"));
    return;
  }
  holder.replaceChildren(
    el("span", {}, "Workspace ", el("strong", { "data-workspace": "" }, name ?? "?")),
    el(
      "button",
      {
        type: "button",
        class: "link-button",
        onclick: () => {
          forgetToken();
          location.assign("/app/sign-in");
        },
      },
      "Sign out",
    ),
  );
}

/** The page's own container, ready for content. */
export function pageRoot(): HTMLElement {
  const root = document.getElementById("page");
  if (!root) throw new Error("the page has no #page element");
  return root;
}

/** A labelled form control: the label wraps nothing, it points at the control by id. */
export function field(label: string, control: HTMLElement, hint?: string): HTMLElement {
  const id = control.id || `field-${label.toLowerCase().replace(/[^a-z0-9]+/g, "-")}`;
  control.id = id;
  const hintId = hint ? `${id}-hint` : undefined;
  if (hintId) control.setAttribute("aria-describedby", hintId);
  return el(
    "div",
    { class: "field" },
    el("label", { for: id }, label),
    control,
    hint ? el("span", { class: "hint", id: hintId }, hint) : null,
  );
}

export function selectControl(
  name: string,
  options: readonly (readonly [value: string, label: string])[],
  selected = "",
): HTMLSelectElement {
  const select = el("select", { name, id: `field-${name}` });
  for (const [value, label] of options) {
    const option = el("option", { value }, label);
    if (value === selected) option.selected = true;
    select.append(option);
  }
  return select;
}

export function inputControl(
  name: string,
  attributes: Record<string, string | number | boolean | undefined> = {},
): HTMLInputElement {
  return el("input", { name, id: `field-${name}`, ...attributes });
}

/** Reads the number in a form field; empty gives undefined. */
export function numberFrom(form: HTMLFormElement, name: string): number | undefined {
  const control = form.elements.namedItem(name);
  if (!(control instanceof HTMLInputElement) || control.value.trim() === "") return undefined;
  return Number(control.value);
}

export function textFrom(form: HTMLFormElement, name: string): string {
  const control = form.elements.namedItem(name);
  if (control instanceof HTMLInputElement || control instanceof HTMLSelectElement)
    return control.value.trim();
  return "";
}

/** Starts a page: the session line, then the page's own code once a token is there. */
export function startPage(run: (root: HTMLElement) => Promise<void> | void): void {
  renderSession();
  if (requireToken() === null) return;
  const root = pageRoot();
  Promise.resolve(run(root)).catch((error: unknown) => root.replaceChildren(errorBox(error)));
}

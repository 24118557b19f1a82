/**
 * A readable API reference rendered on the server from the OpenAPI document: plain HTML and
 * inline CSS, no scripts and no CDN, so it works offline and behind strict firewalls.
 */

type Json = null | boolean | number | string | Json[] | { [key: string]: Json };
type JsonObject = { [key: string]: Json };

interface OpenApiLike {
  readonly info?: { title?: string; version?: string; description?: string };
  readonly paths?: Record<string, Record<string, unknown>>;
  readonly components?: { schemas?: Record<string, unknown> };
}

const methodOrder = ["get", "post", "put", "patch", "delete"];

export function renderReferencePage(document: unknown): string {
  const doc = document as OpenApiLike;
  const schemas = (doc.components?.schemas ?? {}) as Record<string, JsonObject>;
  const operations: { path: string; method: string; operation: JsonObject }[] = [];
  for (const [path, item] of Object.entries(doc.paths ?? {})) {
    for (const method of methodOrder) {
      const operation = item[method];
      if (operation && typeof operation === "object")
        operations.push({ path, method, operation: operation as JsonObject });
    }
  }
  const byTag = new Map<string, typeof operations>();
  for (const entry of operations) {
    const tags = entry.operation["tags"];
    const tag = Array.isArray(tags) && typeof tags[0] === "string" ? tags[0] : "other";
    byTag.set(tag, [...(byTag.get(tag) ?? []), entry]);
  }

  const contents = [...byTag.entries()]
    .map(
      ([tag, entries]) =>
        `<li>${escapeHtml(tag)}<ul>${entries
          .map(
            (e) =>
              `<li><a href="#${anchor(e.method, e.path)}"><code>${e.method.toUpperCase()} ${escapeHtml(e.path)}</code></a></li>`,
          )
          .join("")}</ul></li>`,
    )
    .join("");

  const sections = [...byTag.entries()]
    .map(
      ([tag, entries]) =>
        `<section><h2>${escapeHtml(tag)}</h2>${entries.map((e) => renderOperation(e.path, e.method, e.operation, schemas)).join("")}</section>`,
    )
    .join("");

  const schemaSection = Object.entries(schemas)
    .map(
      ([name, schema]) =>
        `<article id="schema-${name.replace(/[^A-Za-z0-9]+/g, "-")}"><h3><code>${escapeHtml(name)}</code></h3>` +
        `${typeof schema["description"] === "string" ? `<p>${escapeHtml(schema["description"])}</p>` : ""}` +
        `${renderSchema(schema, schemas)}</article>`,
    )
    .join("\n");

  const title = doc.info?.title ?? "API reference";
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${escapeHtml(title)}: reference</title>
<style>
body { font: 15px/1.5 system-ui, sans-serif; max-width: 60rem; margin: 2rem auto; padding: 0 1rem; color: #1d232b; }
code, pre { font-family: ui-monospace, monospace; font-size: 13px; }
code { background: #f1f3f5; padding: 0 .25em; border-radius: 3px; }
article { border-top: 1px solid #d5dae0; padding: .5rem 0 1rem; }
h3 code { font-size: 15px; }
.method { display: inline-block; min-width: 4.5em; font-weight: 600; }
table { border-collapse: collapse; margin: .25rem 0 .75rem; }
th, td { text-align: left; vertical-align: top; padding: .2rem .6rem; border-bottom: 1px solid #e6e9ed; }
th { font-weight: 600; }
.muted { color: #5b6673; }
</style>
</head>
<body>
<h1>${escapeHtml(title)} <span class="muted">version ${escapeHtml(doc.info?.version ?? "")}</span></h1>
<p>${escapeHtml(doc.info?.description ?? "")}</p>
<p>Machine-readable document: <a href="/api/openapi.json"><code>/api/openapi.json</code></a>.</p>
<nav><h2>Contents</h2><ul>${contents}<li><a href="#schemas">Schemas</a></li></ul></nav>
${sections}
<section id="schemas"><h2>Schemas</h2>
<p>The named types used above.</p>
${schemaSection}
</section>
</body>
</html>
`;
}

function renderOperation(
  path: string,
  method: string,
  operation: JsonObject,
  schemas: Record<string, JsonObject>,
): string {
  const parts: string[] = [];
  parts.push(
    `<article id="${anchor(method, path)}"><h3><code><span class="method">${method.toUpperCase()}</span>${escapeHtml(path)}</code></h3>`,
  );
  if (typeof operation["summary"] === "string")
    parts.push(`<p><strong>${escapeHtml(operation["summary"])}</strong></p>`);
  if (typeof operation["description"] === "string")
    parts.push(`<p>${escapeHtml(operation["description"])}</p>`);
  const security = operation["security"];
  const role = operation["x-required-role"];
  if (Array.isArray(security) && security.length === 0) parts.push(`<p class="muted">No token needed.</p>`);
  else if (typeof role === "string")
    parts.push(`<p class="muted">Needs a <strong>${escapeHtml(role)}</strong> token (or a higher role).</p>`);

  const parameters = Array.isArray(operation["parameters"]) ? (operation["parameters"] as JsonObject[]) : [];
  if (parameters.length > 0) {
    parts.push(
      "<h4>Parameters</h4><table><tr><th>name</th><th>in</th><th>type</th><th>required</th><th>description</th></tr>",
    );
    for (const parameter of parameters) {
      const schema = resolve(parameter["schema"], schemas);
      parts.push(
        `<tr><td><code>${escapeHtml(String(parameter["name"] ?? ""))}</code></td><td>${escapeHtml(String(parameter["in"] ?? ""))}</td>` +
          `<td>${escapeHtml(describeType(schema, schemas))}</td><td>${parameter["required"] ? "yes" : "no"}</td>` +
          `<td>${escapeHtml(describeDetails(schema, parameter["description"]))}</td></tr>`,
      );
    }
    parts.push("</table>");
  }

  const body = operation["requestBody"] as JsonObject | undefined;
  const bodyContent = body?.["content"] as Record<string, JsonObject> | undefined;
  if (bodyContent) {
    for (const [mediaType, media] of Object.entries(bodyContent)) {
      parts.push(
        `<h4>Request body <code>${escapeHtml(mediaType)}</code>${body?.["required"] ? "" : " (optional)"}</h4>`,
      );
      parts.push(renderSchema(media["schema"], schemas));
    }
  }

  const responses = (operation["responses"] ?? {}) as Record<string, JsonObject>;
  parts.push("<h4>Responses</h4><table><tr><th>status</th><th>meaning</th><th>body</th></tr>");
  for (const [status, response] of Object.entries(responses)) {
    const content = response["content"] as Record<string, JsonObject> | undefined;
    const schema = content ? Object.values(content)[0]?.["schema"] : undefined;
    parts.push(
      `<tr><td>${escapeHtml(status)}</td><td>${escapeHtml(String(response["description"] ?? ""))}</td>` +
        `<td>${schema ? escapeHtml(describeType(schema, schemas)) : ""}</td></tr>`,
    );
  }
  parts.push("</table>");
  const success = Object.entries(responses).find(([status]) => status.startsWith("2"));
  const successContent = success?.[1]["content"] as Record<string, JsonObject> | undefined;
  const successSchema = successContent ? Object.values(successContent)[0]?.["schema"] : undefined;
  if (successSchema) {
    parts.push(`<details><summary>Fields of the ${escapeHtml(success?.[0] ?? "")} response</summary>`);
    parts.push(renderSchema(successSchema, schemas));
    parts.push("</details>");
  }
  parts.push("</article>");
  return parts.join("\n");
}

/** A table of an object schema's fields (one level; nested objects are named by type). */
function renderSchema(raw: Json | undefined, schemas: Record<string, JsonObject>): string {
  const schema = resolve(raw, schemas);
  const properties = schema["properties"] as Record<string, Json> | undefined;
  if (!properties) return `<p><code>${escapeHtml(describeType(raw, schemas))}</code></p>`;
  const required = new Set(Array.isArray(schema["required"]) ? (schema["required"] as string[]) : []);
  const rows = Object.entries(properties).map(([name, property]) => {
    const resolved = resolve(property, schemas);
    return (
      `<tr><td><code>${escapeHtml(name)}</code></td><td>${escapeHtml(describeType(property, schemas))}</td>` +
      `<td>${required.has(name) ? "yes" : "no"}</td><td>${escapeHtml(describeDetails(resolved, resolved["description"]))}</td></tr>`
    );
  });
  return `<table><tr><th>field</th><th>type</th><th>required</th><th>description</th></tr>${rows.join("")}</table>`;
}

function resolve(raw: Json | undefined, schemas: Record<string, JsonObject>, depth = 0): JsonObject {
  if (!raw || typeof raw !== "object" || Array.isArray(raw) || depth > 8) return {};
  const ref = raw["$ref"];
  if (typeof ref === "string") {
    const name = ref.split("/").pop() ?? "";
    return resolve(schemas[name], schemas, depth + 1);
  }
  const parts = raw["allOf"];
  if (Array.isArray(parts)) {
    // An extended schema (e.g. a detail view) is written as allOf; show the merged fields.
    const properties: JsonObject = {};
    const required: Json[] = [];
    for (const part of parts) {
      const resolved = resolve(part, schemas, depth + 1);
      Object.assign(properties, (resolved["properties"] as JsonObject | undefined) ?? {});
      if (Array.isArray(resolved["required"])) required.push(...resolved["required"]);
    }
    return { type: "object", properties, required };
  }
  return raw;
}

function describeType(raw: Json | undefined, schemas: Record<string, JsonObject>): string {
  if (!raw || typeof raw !== "object" || Array.isArray(raw)) return "any";
  const ref = raw["$ref"];
  if (typeof ref === "string") return ref.split("/").pop() ?? "object";
  const schema = raw;
  for (const combinator of ["anyOf", "oneOf", "allOf"]) {
    const options = schema[combinator];
    if (Array.isArray(options)) return options.map((option) => describeType(option, schemas)).join(" | ");
  }
  const enumValues = schema["enum"];
  if (Array.isArray(enumValues)) return enumValues.map((value) => JSON.stringify(value)).join(" | ");
  const type = schema["type"];
  let text = typeof type === "string" ? type : Array.isArray(type) ? type.join(" | ") : "object";
  if (type === "array") text = `${describeType(schema["items"], schemas)}[]`;
  if (typeof schema["format"] === "string") text += ` (${schema["format"]})`;
  if (schema["nullable"] === true) text += " | null";
  return text;
}

function describeDetails(schema: JsonObject, description: Json | undefined): string {
  const details: string[] = [];
  if (typeof description === "string") details.push(description);
  if (schema["default"] !== undefined) details.push(`default ${JSON.stringify(schema["default"])}`);
  if (typeof schema["minimum"] === "number") details.push(`minimum ${schema["minimum"]}`);
  if (typeof schema["maximum"] === "number") details.push(`maximum ${schema["maximum"]}`);
  if (schema["example"] !== undefined) details.push(`e.g. ${JSON.stringify(schema["example"])}`);
  return details.join("; ");
}

function anchor(method: string, path: string): string {
  return `${method}-${path.replace(/[^A-Za-z0-9]+/g, "-").replace(/^-|-$/g, "")}`;
}

function escapeHtml(text: string): string {
  return text
    .replaceAll("&", "&amp;")
    .replaceAll("<", "&lt;")
    .replaceAll(">", "&gt;")
    .replaceAll('"', "&quot;")
    .replaceAll("'", "&#39;");
}

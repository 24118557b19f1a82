/** The plain page at `/`: what plumbline is and where the API reference lives. */
export function renderLandingPage(): string {
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>plumbline</title>
<style>
body { font: 16px/1.5 system-ui, sans-serif; max-width: 42rem; margin: 3rem auto; padding: 0 1rem; color: #1d232b; }
code { background: #f1f3f5; padding: 0 .25em; border-radius: 3px; }
a { color: #1f5fa8; }
</style>
</head>
<body>
<h1>plumbline</h1>
<p>plumbline keeps a company's history of A/B tests and reviews the experimentation program as a whole:
how often its wins are real, how much reported lifts are exaggerated, and which alpha, power and run
length to use next.</p>
<p><a href="/app/sign-in"><strong>Open plumbline</strong></a>: sign in with a token, then the test history,
the program review, the recommended defaults and the backlog forecast.</p>
<ul>
<li><a href="/api/reference">API reference</a> (readable)</li>
<li><a href="/api/openapi.json">OpenAPI document</a> (machine readable)</li>
<li><a href="/api/health">Health</a></li>
</ul>
<p>Every <code>/api/v1</code> call needs <code>Authorization: Bearer &lt;token&gt;</code>.
An operator creates a workspace and its first admin token with <code>plumbline workspace create NAME</code>.</p>
<p>The estimates plumbline reports rest on stated assumptions; they do not replace a statistician's
review and are not for clinical or safety-critical decisions.</p>
</body>
</html>
`;
}

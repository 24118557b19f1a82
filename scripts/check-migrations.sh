#!/usr/bin/env bash
# Fails when src/db/schema.ts has changed without a committed migration: runs drizzle-kit
# generate against a copy of migrations/ and reports any file it would write.
set -euo pipefail
cd "$(dirname "$0")/.."
# drizzle-kit only accepts an --out relative to the project, so the scratch copy lives inside it.
scratch=node_modules/.cache/plumbline-migrations-check
rm -rf "$scratch" && mkdir -p "$scratch"
trap 'rm -rf "$scratch"' EXIT
cp -r migrations "$scratch/migrations"
if ! npx drizzle-kit generate --dialect sqlite --schema ./src/db/schema.ts --out "./$scratch/migrations" >"$scratch/log" 2>&1 \
  || grep -qiE '(^|[^a-z])error' "$scratch/log"; then
  cat "$scratch/log" >&2
  exit 1
fi
if ! diff -rq migrations "$scratch/migrations" >/dev/null; then
  echo "src/db/schema.ts differs from the committed migrations; run: npm run db:generate -- --name <change>" >&2
  diff -rq migrations "$scratch/migrations" >&2 || true
  exit 1
fi
echo "migrations match src/db/schema.ts"

#!/usr/bin/env bash
# Generated clients and a lint of the committed OpenAPI document (openapi/openapi.json), with
# pinned tools from the registries. Exits non-zero on any failure.
#
#   tests/live/clients_check.sh
#
# 1. Python: openapi-python-client (PyPI) in a temporary virtual environment generates a
#    client from the document (settings: tests/live/clients/openapi-python-client.yaml; any
#    generator warning other than the MessagePack bodies it cannot describe fails the step),
#    the client is installed there, and tests/live/generated_client_drive.py drives a live
#    server (started with the `python` on PATH, which has ibl) through it.
# 2. TypeScript (npm, tests/live/clients/, versions in package-lock.json): openapi-typescript
#    generates types, `tsc --noEmit --strict` checks example.ts, which uses them, and
#    `redocly lint` with the recommended rules must find no error (warnings are printed).
#    openapi-typescript runs with --default-non-nullable false: by default it makes every
#    member with a default required, which is right for answers but not for the cases a
#    client writes (Flow.mach has a default and may be left out).
set -euo pipefail
root="$(cd "$(dirname "$0")/../.." && pwd)"
cd "$root"

# The pinned generator (the npm tools are pinned in tests/live/clients/package-lock.json).
python_generator="openapi-python-client==0.29.1"

server_python="$(command -v python)"
work="$(mktemp -d)"
trap 'rm -rf "$work"' EXIT

echo "--- Python client: $python_generator"
python3 -m venv "$work/venv"
"$work/venv/bin/python" -m pip install --quiet --disable-pip-version-check "$python_generator"
"$work/venv/bin/openapi-python-client" --version
log="$work/generate.log"
if ! "$work/venv/bin/openapi-python-client" generate --path openapi/openapi.json \
    --output-path "$work/ibl-client" --meta setup \
    --config tests/live/clients/openapi-python-client.yaml >"$log" 2>&1; then
    cat "$log"; echo "openapi-python-client failed" >&2; exit 1
fi
warnings="$(grep -c '^WARNING' "$log" || true)"
msgpack="$(grep -c '^Unsupported content type application/msgpack$' "$log" || true)"
echo "generator warnings: $warnings ($msgpack of them: MessagePack request bodies, not described)"
if [[ "$warnings" != "$msgpack" ]]; then
    cat "$log"; echo "the generator reported warnings other than MessagePack bodies" >&2; exit 1
fi
"$work/venv/bin/python" -m pip install --quiet --disable-pip-version-check "$work/ibl-client"
"$work/venv/bin/python" tests/live/generated_client_drive.py --server-python "$server_python"

echo "--- TypeScript types and lint (npm ci in tests/live/clients)"
cd tests/live/clients
export REDOCLY_TELEMETRY=off REDOCLY_SUPPRESS_UPDATE_NOTICE=true
npm ci --no-audit --no-fund --loglevel=error
bin=node_modules/.bin
echo "openapi-typescript $("$bin/openapi-typescript" --version), typescript $("$bin/tsc" --version)," \
    "@redocly/cli $("$bin/redocly" --version)"
npm run --silent types
npm run --silent typecheck
echo "tsc --noEmit --strict: example.ts type-checks against the generated types"
npm run --silent lint -- --format=stylish
echo "clients check: passed"

#!/usr/bin/env bash
# schemathesis against a live server: `ibl serve` with 2 workers on 127.0.0.1, all checks,
# positive and negative data, a fixed seed. Exits non-zero on any failure.
#
#   tests/live/schemathesis_live.sh [MAX_EXAMPLES]
#
# positive_data_acceptance is skipped everywhere: the document cannot express the
# library's cross-field rules (equal lengths, increasing s), so schema-valid cases may
# rightly get 422. For the batch, a schema-invalid case is answered in place (200 with a
# problem in its slot), so negative_data_rejection is skipped there too.
set -euo pipefail
examples="${1:-40}"
# MessagePack bodies and answers: serializer and deserializer in tests/schemathesis_hooks.py.
tests_dir="$(cd "$(dirname "$0")/.." && pwd)"
export PYTHONPATH="$tests_dir${PYTHONPATH:+:$PYTHONPATH}" SCHEMATHESIS_HOOKS=schemathesis_hooks
port="$(python -c 'import socket; s = socket.socket(); s.bind(("127.0.0.1", 0)); print(s.getsockname()[1])')"
log="$(mktemp)"
IBL_MAX_POINTS=400 IBL_MAX_BATCH=8 ibl serve --host 127.0.0.1 --port "$port" --workers 2 >"$log" 2>&1 &
server=$!
trap 'kill "$server" 2>/dev/null || true; wait "$server" 2>/dev/null || true; rm -f "$log"' EXIT
for _ in $(seq 1 480); do
    if python -c "import urllib.request as u; u.urlopen('http://127.0.0.1:$port/health/ready', timeout=2)" 2>/dev/null; then
        break
    fi
    if ! kill -0 "$server" 2>/dev/null; then
        cat "$log"; echo "server exited before it was ready" >&2; exit 1
    fi
    sleep 0.5
done
url="http://127.0.0.1:$port/schema/openapi.json"
common=(--checks all --max-examples "$examples" --seed 20250601 --generation-deterministic
        --mode all --workers 2 --request-timeout 60 --no-color)
schemathesis run "$url" "${common[@]}" --exclude-checks positive_data_acceptance \
    --exclude-path /v1/analyses/batch
schemathesis run "$url" "${common[@]}" \
    --exclude-checks positive_data_acceptance,negative_data_rejection \
    --include-path /v1/analyses/batch
echo "live schemathesis: no failures"

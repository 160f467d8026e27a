#!/usr/bin/env bash
# Property-based requests generated from /api/v1/openapi.json (schemathesis): no input,
# however odd, may make the API answer with a server error. Runs the debug binary on a
# fresh SQLite file with the demo loaded.
set -euo pipefail
cd "$(dirname "${BASH_SOURCE[0]}")/../.."

venv=target/api-fuzz-venv
if [[ ! -x $venv/bin/st ]]; then
    python3 -m venv "$venv"
    "$venv/bin/pip" install --quiet --disable-pip-version-check 'schemathesis==4.32.5'
fi

dir=$(mktemp -d)
log="$dir/serve.log"
: >"$log"
target/debug/glasspoint serve --demo --bind 127.0.0.1:0 --database "sqlite://$dir/fuzz.db" 2>"$log" &
server=$!
trap 'kill $server 2>/dev/null; rm -rf "$dir"' EXIT

base=""
for _ in $(seq 1 60); do
    base=$(sed -n 's/.*listening on \(http:[^ ]*\).*/\1/p' "$log" | head -1)
    [[ -n $base ]] && break
    sleep 0.5
done
[[ -n $base ]] || { cat "$log"; echo "api-fuzz: the server did not start" >&2; exit 1; }

# schemathesis keeps its state in the working directory: give it the throwaway one.
st=$(realpath "$venv/bin/st")
(cd "$dir" && "$st" run "$base/api/v1/openapi.json" --checks not_a_server_error --max-examples 25 --no-color)
if grep -q "a request handler panicked\|ERROR" "$log"; then
    grep "panicked\|ERROR" "$log" >&2
    echo "api-fuzz: the server logged errors" >&2
    exit 1
fi

#!/usr/bin/env bash
# Property-based requests generated from /api/v1/openapi.json (schemathesis): no input,
# however odd, may make the API answer with a server error. Runs the debug binary on a
# fresh SQLite file with the demo loaded, and sends every request with a write token of
# the demo administrator (made on the console once the server runs: the SQLite file is
# shared in WAL mode).
#
# The run cannot pass vacuously: before fuzzing, the token must open the API (200) and
# its absence must close it (401); after, the recorded exchanges must show that the
# requests reached the handlers (answers other than 401/403, successes among them).
#
# GLASSPOINT_BIN picks the binary; by default ${CARGO_TARGET_DIR:-target}/debug/glasspoint.
set -euo pipefail
cd "$(dirname "${BASH_SOURCE[0]}")/../.."

fail() { echo "api-fuzz: $*" >&2; exit 1; }

target_dir=${CARGO_TARGET_DIR:-target}
bin=$(realpath "${GLASSPOINT_BIN:-$target_dir/debug/glasspoint}")
[[ -x $bin ]] || fail "no binary at $bin: run cargo build first"

venv=$target_dir/api-fuzz-venv
if [[ ! -x $venv/bin/st ]]; then
    python3 -m venv "$venv"
    "$venv/bin/pip" install --quiet --disable-pip-version-check 'schemathesis==4.32.5'
fi

dir=$(mktemp -d)
log="$dir/serve.log"
db="sqlite://$dir/fuzz.db"
: >"$log"
NO_COLOR=1 "$bin" serve --demo --bind 127.0.0.1:0 --database "$db" 2>"$log" &
server=$!
trap 'kill $server 2>/dev/null; rm -rf "$dir"' EXIT

base=""
for _ in $(seq 1 60); do
    base=$(sed -n 's/.*listening on \(http:[^ ]*\).*/\1/p' "$log" | head -1)
    [[ -n $base ]] && break
    sleep 0.5
done
[[ -n $base ]] || { cat "$log"; fail "the server did not start"; }

# A write token for the demo administrator, made beside the running server.
token=$("$bin" user token iravel --scope write --label api-fuzz --database "$db" 2>"$dir/token.err") \
    || { cat "$dir/token.err" >&2; fail "could not make a token for iravel"; }
[[ $token == gpt_* ]] || fail "'glasspoint user token' printed no token: '$token'"

# The token opens the API and nothing else does: otherwise the fuzzing below proves nothing.
status() { curl -s -o /dev/null -w '%{http_code}' "$@"; }
with=$(status -H "Authorization: Bearer $token" "$base/api/v1/formulations")
without=$(status "$base/api/v1/formulations")
[[ $with == 200 ]] || fail "GET /api/v1/formulations with the token answered $with, not 200"
[[ $without == 401 ]] || fail "GET /api/v1/formulations without a token answered $without, not 401"
schema=$(status -H "Authorization: Bearer $token" "$base/api/v1/openapi.json")
[[ $schema == 200 ]] || fail "GET /api/v1/openapi.json with the token answered $schema, not 200"
echo "api-fuzz: the token opens the API (200), no token is refused (401)"

# schemathesis keeps its state in the working directory: give it the throwaway one.
st=$(realpath "$venv/bin/st")
har="$dir/exchanges.har"
(cd "$dir" && "$st" run "$base/api/v1/openapi.json" \
    -H "Authorization: Bearer $token" \
    --checks not_a_server_error --max-examples 25 --no-color \
    --report har --report-har-path "$har")

if grep -q "a request handler panicked\|ERROR" "$log"; then
    grep "panicked\|ERROR" "$log" >&2
    fail "the server logged errors"
fi

# What the fuzzing actually got back: refusals of the credentials may not dominate.
"$venv/bin/python" - "$har" <<'EOF'
import collections, json, sys
entries = json.load(open(sys.argv[1]))["log"]["entries"]
by_status = collections.Counter(e["response"]["status"] for e in entries)
refused = by_status[401] + by_status[403]
ok = sum(n for s, n in by_status.items() if 200 <= s < 300)
print(f"api-fuzz: {len(entries)} requests; statuses {dict(sorted(by_status.items()))}")
problems = []
if len(entries) < 100:
    problems.append(f"only {len(entries)} requests were recorded")
if ok < max(20, len(entries) // 50):
    problems.append(f"only {ok} of {len(entries)} requests succeeded")
if refused > len(entries) // 20:
    problems.append(f"{refused} of {len(entries)} requests were refused with 401/403")
if problems:
    sys.exit("api-fuzz: the run proves too little: " + "; ".join(problems))
EOF

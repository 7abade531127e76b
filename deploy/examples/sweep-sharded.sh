#!/usr/bin/env bash
# EXAMPLE, with an invented scenario: spread one large sweep over the service's replicas.
#
# The service keeps no state between requests, so a big grid is split by the client: the values
# of one axis are cut into chunks, each chunk is POSTed as its own /v1/sweep on its own
# connection (the Kubernetes Service balances per connection, so the chunks land on different
# pods), and the NDJSON streams are merged into one, ordered by the varied value.
#
# Scenario (invented): a 12 mm x 20 mm N42 magnet in a copper tube of 13 mm bore; the wall
# thickness runs from 0.5 mm to 3.0 mm in 0.1 mm steps (26 values), in chunks of 7 values,
# up to 4 requests at a time.
#
# Usage:  RINGDRAG_URL=http://ringdrag.NAMESPACE.svc ./sweep-sharded.sh > sweep.ndjson
# Optional: RINGDRAG_TOKEN (bearer token), CHUNK_SIZE, PARALLEL. Needs bash, curl and jq.
set -euo pipefail

export RINGDRAG_URL="${RINGDRAG_URL:-http://localhost:8080}"
chunk_size="${CHUNK_SIZE:-7}"
parallel="${PARALLEL:-4}"
path="tube.wall_thickness_m"

design='{
  "magnets": {"grade": "N42", "outer_diameter_m": 0.012, "length_m": 0.020},
  "tube": {"material": "copper-c12200", "inner_diameter_m": 0.013,
           "wall_thickness_m": 0.0015, "length_m": 0.30}
}'
metrics='["terminal_speed_m_per_s", "peak_force_n"]'

workdir="$(mktemp -d)"
trap 'rm -rf "${workdir}"' EXIT
export workdir

# The token goes into a header file, so it does not show in the process list.
if [[ -n "${RINGDRAG_TOKEN:-}" ]]; then
    (umask 077 && printf 'Authorization: Bearer %s\n' "${RINGDRAG_TOKEN}" > "${workdir}/auth")
else
    : > "${workdir}/auth"
fi

# 1. The varied axis, cut into chunks; one request body per chunk (request-0000, -0001, ...).
jq -n '[range(5; 31) | . / 10000]' \
    | jq -c --argjson n "${chunk_size}" '. as $v | range(0; $v | length; $n) | $v[.:(. + $n)]' \
    | jq -c --argjson design "${design}" --argjson metrics "${metrics}" --arg path "${path}" \
        '{design: $design, vary: [{path: $path, values: .}], metrics: $metrics}' \
    | split -l 1 -d -a 4 - "${workdir}/request-"

# 2. One streamed sweep per chunk. curl retries a 503 (the pod's job slots are full) after the
#    Retry-After the service sends; a job is a pure function of its request, so a retry is safe.
send_chunk() {
    curl --silent --show-error --fail-with-body \
        --retry 5 --retry-max-time 300 \
        -H 'Content-Type: application/json' \
        -H 'Accept: application/x-ndjson' \
        -H "@${workdir}/auth" \
        --data-binary "@$1" \
        --output "$1.ndjson" \
        "${RINGDRAG_URL}/v1/sweep" \
        || { echo "chunk $1 failed: $(cat "$1.ndjson" 2>/dev/null)" >&2; return 1; }
}
export -f send_chunk
# shellcheck disable=SC2016 # "$1" is expanded by the inner bash, on purpose.
if ! find "${workdir}" -name 'request-????' -print0 \
    | xargs -0 -n 1 -P "${parallel}" bash -c 'send_chunk "$1"' _; then
    echo "some chunks failed; nothing merged" >&2
    exit 1
fi

# 3. Merge the streams, ordered by the varied value; count the points that carry an error.
streams=("${workdir}"/request-????.ndjson)
cat "${streams[@]}" | jq -c -s --arg path "${path}" 'sort_by(.inputs[$path]) | .[]'
failed_points="$(cat "${streams[@]}" | jq -s '[.[] | select(.error != null)] | length')"
echo "merged ${#streams[@]} chunks; points with an error: ${failed_points}" >&2

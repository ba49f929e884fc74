#!/bin/sh
# Starts Urnbound under gunicorn with a fresh, empty Prometheus multiprocess directory.
set -eu

here="$(cd "$(dirname "$0")" && pwd)"
: "${PROMETHEUS_MULTIPROC_DIR:=/tmp/urnbound-metrics}"
export PROMETHEUS_MULTIPROC_DIR

# Files left by a previous run would be summed into the new one's metrics, so the directory
# is wiped before any worker starts. Refuse paths whose removal would do harm.
case "$PROMETHEUS_MULTIPROC_DIR" in
    "" | "/" | "." | "..")
        echo "entrypoint: refusing to wipe PROMETHEUS_MULTIPROC_DIR='$PROMETHEUS_MULTIPROC_DIR'" >&2
        exit 64
        ;;
esac
rm -rf -- "$PROMETHEUS_MULTIPROC_DIR"
mkdir -p -- "$PROMETHEUS_MULTIPROC_DIR"

exec python -m gunicorn --config "$here/gunicorn.conf.py" "$@" urnbound.wsgi:app

#!/bin/sh
# Regenerates the lock files from pyproject.toml (run it as `make lock`):
#   requirements/test.txt  runtime + test extras (make venv, CI)
#   requirements/base.txt  runtime only, the same versions (the Dockerfile)
# One universal resolution for Python 3.12+ on any platform, every file pinned by its hash.
# uv does not read pip's configuration, so it is handed the index and certificate that pip
# is configured with on this machine (none set: PyPI). Pins already in the files are kept
# unless pyproject.toml needs otherwise; `make lock LOCK_ARGS=--upgrade` takes newer releases.
set -eu
cd "$(dirname "$0")/.."
bin=.venv/bin
if [ ! -x "$bin/uv" ]; then
  echo "lock: $bin/uv is missing; run make venv first" >&2
  exit 1
fi
index="${PIP_INDEX_URL:-$("$bin/pip" config get global.index-url 2>/dev/null || true)}"
cert="${PIP_CERT:-$("$bin/pip" config get global.cert 2>/dev/null || true)}"
if [ -n "$index" ]; then export UV_DEFAULT_INDEX="$index"; fi
if [ -n "$cert" ]; then export SSL_CERT_FILE="$cert"; fi

compile() {
  "$bin/uv" pip compile pyproject.toml --universal --python-version 3.12 --generate-hashes \
    --custom-compile-command "make lock" --quiet "$@"
}
# shellcheck disable=SC2086  # LOCK_ARGS is a list of options
compile --extra test ${LOCK_ARGS:-} -o requirements/test.txt
compile --constraint requirements/test.txt -o requirements/base.txt

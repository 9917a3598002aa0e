#!/bin/sh
# fuzz-regressions.sh - replay the fuzz corpus (inputs that once crashed, hung
# or leaked, plus the seeds) through the statement runner with limits.
set -u
src=${ITOX_SRCDIR:-.}
replay=${ITOX_REPLAY:-./tests/fuzz/replay}
set -- "$src"/tests/fuzz/corpus/*
[ -e "$1" ] || { echo "empty corpus"; exit 1; }
exec "$replay" "$@"

#!/bin/sh
# Regenerates the ERFA reference tables in this directory.
# Needs a C compiler and ERFA (Debian: apt-get install -y gcc liberfa-dev).
# Usage: sh testdata/erfa/gen.sh [SEED]   (default seed 20261201)
set -eu
dir=$(cd "$(dirname "$0")" && pwd)
bin=$(mktemp)
trap 'rm -f "$bin"' EXIT
cc -std=c99 -O2 -Wall -o "$bin" "$dir/gen.c" -lerfa -lm
"$bin" "$dir" "${1:-20261201}"

#!/bin/sh
# Regenerate testdata/libxc/kernels.json from Debian's libxc (apt-get install libxc-dev).
# CI does not run this; Go tests only read kernels.json.
set -eu
cd "$(dirname "$0")"
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
gcc -O0 -std=c11 -D_DEFAULT_SOURCE -DGEN_DATE="\"$(date -u +%Y-%m-%dT%H:%M:%SZ)\"" -o "$tmp/gen" gen.c -lxc -lm
"$tmp/gen" > "$tmp/kernels.json"
/usr/bin/python3 -m json.tool "$tmp/kernels.json" > /dev/null   # must be valid JSON
mv "$tmp/kernels.json" kernels.json
echo "wrote $(pwd)/kernels.json"

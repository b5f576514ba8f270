#!/usr/bin/env bash
# Fetch ONNX Runtime's Linux x64 shared library from the npm package
# onnxruntime-node (MIT licence), which ships it prebuilt under
# bin/napi-v6/linux/x64/. Nothing else of the package is kept.
#   .ci/fetch-onnxruntime.sh VERSION DIR SHA256-OF-THE-LIBRARY
# Uses `npm pack` when npm is installed, else downloads the same tarball
# from the npm registry; the library's SHA-256 is checked either way.
set -euo pipefail
version=$1 dir=$2 want=$3
lib=libonnxruntime.so.1
mkdir -p "$dir"
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
echo "fetching ONNX Runtime from the npm package onnxruntime-node@$version"
tgz="$tmp/onnxruntime-node-$version.tgz"
if command -v npm >/dev/null; then
  (cd "$tmp" && npm pack --silent "onnxruntime-node@$version" >/dev/null)
else
  registry=${NPM_CONFIG_REGISTRY:-https://registry.npmjs.org}
  /usr/bin/python3 - "$registry/onnxruntime-node/-/onnxruntime-node-$version.tgz" "$tgz" <<'PY'
import shutil, sys, urllib.request
with urllib.request.urlopen(sys.argv[1], timeout=120) as r, open(sys.argv[2], "wb") as f:
    shutil.copyfileobj(r, f)
PY
fi
tar -xzf "$tgz" -C "$tmp" "package/bin/napi-v6/linux/x64/$lib"
got=$(sha256sum "$tmp/package/bin/napi-v6/linux/x64/$lib" | cut -d' ' -f1)
if [ "$got" != "$want" ]; then
  echo "ONNX Runtime library from onnxruntime-node@$version has SHA-256 $got, expected $want; not installed" >&2
  exit 1
fi
mv "$tmp/package/bin/napi-v6/linux/x64/$lib" "$dir/$lib.partial"
mv "$dir/$lib.partial" "$dir/$lib"
echo "ONNX Runtime $version: $dir/$lib"

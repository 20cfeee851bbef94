#!/usr/bin/env bash
# Builds the release bundle and serves it on http://127.0.0.1:${PORT:-8080}/ with the
# precompressed siblings (.ci/static-server.py). The build also writes the app as one file,
# dist/rangefit-offline.html, which links back to this address.
set -euo pipefail

ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
export PATH="$ROOT/tools/npm/node_modules/.bin:$HOME/.cargo/bin:$PATH"
PORT="${PORT:-8080}"
cd "$ROOT"

"$ROOT/.ci/install.sh"
cargo fetch
RANGEFIT_HOME="http://127.0.0.1:$PORT/" trunk build --release

echo
echo "Rangefit: http://127.0.0.1:$PORT/   (Ctrl+C stops the server)"
echo "One file for a computer without a network: $ROOT/dist/rangefit-offline.html"
echo
exec python3 "$ROOT/.ci/static-server.py" "$PORT" "$ROOT/dist" --bind 127.0.0.1

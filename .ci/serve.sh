#!/usr/bin/env bash
# Builds the release bundle and serves it on http://127.0.0.1:${PORT:-8080}/.
set -euo pipefail

ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
export PATH="$ROOT/tools/npm/node_modules/.bin:$HOME/.cargo/bin:$PATH"
PORT="${PORT:-8080}"
cd "$ROOT"

"$ROOT/.ci/install.sh"
cargo fetch
trunk build --release

echo
echo "Rangefit: http://127.0.0.1:$PORT/   (Ctrl+C stops the server)"
echo
exec python3 -m http.server "$PORT" --bind 127.0.0.1 --directory "$ROOT/dist"

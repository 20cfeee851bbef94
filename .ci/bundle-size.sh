#!/usr/bin/env bash
# Measures what the first load of the built page transfers: every file in dist/ (the
# release bundle: index.html, the JavaScript glue, the WebAssembly module, the stylesheet),
# each compressed with gzip -9, and compares the total with the 250 KB first-load target.
# The target is not met (the engine's design and analyses alone are about 177 KB
# compressed, 280 KB with the schematic, plots, report and links), so the script reports
# the miss and fails only above a ceiling that guards against unnoticed growth. The ceiling
# moved from 480 KB to 500 KB when the anti-alias filter and three sensor kinds (current
# loop, high impedance, photodiode) landed (480,256 bytes then), and to 510 KB with the
# instrumentation-amplifier front end and its schematic (503,539 bytes then), and down to
# 470 KB after size-only work (one shared sort, no Unicode case tables, wasm-opt flags:
# 469,082 bytes then); lower it as the bundle shrinks, raise it only with the feature that
# needs it.
# Builds nothing: run `trunk build --release` first (.ci/test.sh does).
#
#   .ci/bundle-size.sh [DIST_DIR]   target TARGET_BYTES (250 KB), ceiling CEILING_BYTES (470 KB)
set -euo pipefail

ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
DIST="${1:-$ROOT/dist}"
TARGET_BYTES="${TARGET_BYTES:-250000}"     # 250 KB, counted as 1 KB = 1000 bytes
CEILING_BYTES="${CEILING_BYTES:-470000}"   # growth guard while the target is missed

if [ ! -f "$DIST/index.html" ]; then
    echo "bundle-size: $DIST/index.html is missing; build the bundle first (trunk build --release)" >&2
    exit 1
fi
shopt -s nullglob
files=("$DIST"/*)
for required in wasm js; do
    found=("$DIST"/*."$required")
    if ((${#found[@]} == 0)); then
        echo "bundle-size: no .$required file in $DIST; is the bundle complete?" >&2
        exit 1
    fi
done

total=0
printf '%-48s %10s %12s\n' "file" "bytes" "gzip -9"
for f in "${files[@]}"; do
    [ -f "$f" ] || continue
    raw=$(stat -c %s "$f")
    gz=$(gzip -9 -c "$f" | wc -c)
    total=$((total + gz))
    printf '%-48s %10d %12d\n' "$(basename "$f")" "$raw" "$gz"
done
printf '%-48s %10s %12d\n' "total (first load, compressed)" "" "$total"
printf '%-48s %10s %12d\n' "target" "" "$TARGET_BYTES"
printf '%-48s %10s %12d\n' "ceiling (fails above)" "" "$CEILING_BYTES"

if ((total > CEILING_BYTES)); then
    echo "bundle-size: FAIL: the first load transfers $total bytes compressed, $((total - CEILING_BYTES)) over the ceiling of $CEILING_BYTES" >&2
    exit 1
fi
if ((total > TARGET_BYTES)); then
    echo "bundle-size: TARGET MISSED: $total bytes compressed, $((total - TARGET_BYTES)) over the $TARGET_BYTES target (under the $CEILING_BYTES ceiling)"
else
    echo "bundle-size: ok, $((TARGET_BYTES - total)) bytes under the target"
fi

#!/usr/bin/env bash
# Installs the Rangefit toolchain. Idempotent: every step is skipped when the right
# version is already present, so a repeated run takes seconds. Nothing is written to
# shell profiles; the other scripts put the tool directories on PATH themselves.
set -euo pipefail

ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
export PATH="$ROOT/tools/npm/node_modules/.bin:$HOME/.cargo/bin:$PATH"

TRUNK_VERSION="0.21.14"          # trunk 0.22 needs a newer rustc than this toolchain
WASM_BINDGEN_VERSION="0.2.130"   # must equal the wasm-bindgen pinned in app/Cargo.toml
BINARYEN_VERSION="132"           # wasm-opt; Debian's older binaryen produces broken bundles
APT_PACKAGES=(chromium chromium-driver ngspice librsvg2-bin brotli)

say() { printf '[install] %s\n' "$*"; }

# --- system packages --------------------------------------------------------------
missing=()
for pkg in "${APT_PACKAGES[@]}"; do
    if ! dpkg-query -W -f='${Status}' "$pkg" 2>/dev/null | grep -q 'install ok installed'; then
        missing+=("$pkg")
    fi
done
if ! command -v npm >/dev/null 2>&1; then
    missing+=(nodejs npm)
fi
if ((${#missing[@]})); then
    SUDO=""
    if [ "$(id -u)" -ne 0 ]; then SUDO="sudo"; fi
    say "apt: installing ${missing[*]}"
    $SUDO apt-get update
    $SUDO env DEBIAN_FRONTEND=noninteractive apt-get install -y "${missing[@]}"
else
    say "apt: ${APT_PACKAGES[*]} already installed"
fi

# --- Rust components (the format and lint gates) -----------------------------------
for comp in rustfmt clippy; do
    if rustup component list --installed | grep -q "^$comp"; then
        say "rustup: $comp already installed"
    else
        say "rustup: adding $comp"
        rustup component add "$comp"
    fi
done

# --- Rust target --------------------------------------------------------------------
if rustup target list --installed | grep -qx wasm32-unknown-unknown; then
    say "rustup: wasm32-unknown-unknown already installed"
else
    say "rustup: adding wasm32-unknown-unknown"
    rustup target add wasm32-unknown-unknown
fi

# --- trunk --------------------------------------------------------------------------
have_trunk="$(trunk --version 2>/dev/null || true)"
if [ "$have_trunk" = "trunk $TRUNK_VERSION" ]; then
    say "trunk $TRUNK_VERSION already installed"
else
    say "trunk: found '${have_trunk:-none}', installing $TRUNK_VERSION (about 8 minutes on 2 cores)"
    cargo install trunk --locked --version "$TRUNK_VERSION" --force
fi

# --- wasm-bindgen-cli ---------------------------------------------------------------
have_wb="$(wasm-bindgen --version 2>/dev/null || true)"
if [ "$have_wb" = "wasm-bindgen $WASM_BINDGEN_VERSION" ]; then
    say "wasm-bindgen $WASM_BINDGEN_VERSION already installed"
else
    say "wasm-bindgen: found '${have_wb:-none}', installing $WASM_BINDGEN_VERSION"
    # Not --locked: one dependency in its lock file is no longer on the registry.
    cargo install wasm-bindgen-cli --version "$WASM_BINDGEN_VERSION" --force
fi

# --- wasm-opt (binaryen on node, project-local) --------------------------------------
have_opt="$(wasm-opt --version 2>/dev/null || true)"
case "$have_opt" in
    "wasm-opt version $BINARYEN_VERSION "*)
        say "wasm-opt $BINARYEN_VERSION already installed" ;;
    *)
        say "wasm-opt: found '${have_opt:-none}', installing binaryen@$BINARYEN_VERSION into tools/npm"
        npm install --prefix "$ROOT/tools/npm" --no-audit --no-fund "binaryen@$BINARYEN_VERSION" ;;
esac

wasm-opt --version | grep -q "version $BINARYEN_VERSION " \
    || { echo "[install] ERROR: wasm-opt on PATH is not version $BINARYEN_VERSION" >&2; exit 1; }
say "toolchain ready: $(trunk --version), $(wasm-bindgen --version), $(wasm-opt --version)"

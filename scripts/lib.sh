# Shared by scripts/bootstrap, scripts/serve and scripts/test. Source it.
#
# Finds or installs what a browser build needs, saying what it does:
#   - a WebAssembly-capable Rust compiler: the rustup target
#     wasm32-unknown-unknown where it can be had, else Debian's rustc-web with
#     the standard library's source (built from source with build-std);
#   - trunk (pinned), wasm-bindgen-cli (the exact version in Cargo.lock),
#     wasm-opt (npm's binaryen), and for tests Chromium and ChromeDriver.
# Every step is idempotent: a second run finds everything and installs nothing.

set -euo pipefail

ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
TRUNK_VERSION="0.21.14"
BINARYEN_VERSION="132"
TOOLS_DIR="${TUSSOCK_TOOLS:-$HOME/.cache/tussock-tools}"
export TRUNK_SKIP_VERSION_CHECK=true
export PATH="$HOME/.cargo/bin:$TOOLS_DIR/node_modules/.bin:$PATH"

say() { printf 'tussock: %s\n' "$*" >&2; }
die() { printf 'tussock: error: %s\n' "$*" >&2; exit 1; }

# Run a command as root (directly, or through sudo when available).
as_root() {
    if [ "$(id -u)" = 0 ]; then "$@"
    elif command -v sudo >/dev/null; then sudo "$@"
    else die "need root to run: $* (install it by hand, or run as root)"; fi
}

APT_UPDATED=0
apt_install() {
    command -v apt-get >/dev/null || die "cannot install $* automatically: no apt-get on this machine; install it by hand"
    if [ "$APT_UPDATED" = 0 ]; then
        say "updating Debian's package lists"
        as_root apt-get update -qq >/dev/null
        APT_UPDATED=1
    fi
    say "installing Debian packages: $*"
    DEBIAN_FRONTEND=noninteractive as_root apt-get install -y -qq "$@" >/dev/null
}

require_cargo() {
    command -v cargo >/dev/null || die "cargo not found: install Rust with rustup (https://rustup.rs) and try again"
}

# rustfmt and clippy: part of rustup's default profile; added when missing.
ensure_lints() {
    if cargo fmt --version >/dev/null 2>&1 && cargo clippy --version >/dev/null 2>&1; then
        return
    fi
    if command -v rustup >/dev/null; then
        say "adding rustfmt and clippy with rustup"
        rustup component add rustfmt clippy >/dev/null 2>&1 || true
    fi
    cargo fmt --version >/dev/null 2>&1 && cargo clippy --version >/dev/null 2>&1 ||
        die "rustfmt and clippy are needed: rustup component add rustfmt clippy"
}

wasm_bindgen_version() {
    # The wasm-bindgen-cli must match the crate in Cargo.lock exactly.
    awk '/^name = "wasm-bindgen"$/ { getline; gsub(/version = |"/, ""); print; exit }' "$ROOT/Cargo.lock"
}

debian_wasm_ready() {
    [ -x /usr/bin/rustc ] && [ -f /usr/lib/rustlib/src/rust/library/Cargo.lock ] && command -v wasm-ld-19 >/dev/null
}

rustup_wasm_ready() {
    command -v rustup >/dev/null && rustup target list --installed 2>/dev/null | grep -qx wasm32-unknown-unknown
}

# Choose how to compile for wasm32 and export the matching environment.
# Sets WASM_ROUTE to "rustup" or "debian".
ensure_wasm_compiler() {
    if rustup_wasm_ready; then
        WASM_ROUTE=rustup
    elif debian_wasm_ready; then
        WASM_ROUTE=debian
    else
        if command -v rustup >/dev/null; then
            say "adding the rustup target wasm32-unknown-unknown (giving up after 90 s)"
            if timeout 90 rustup target add wasm32-unknown-unknown >/dev/null 2>&1 && rustup_wasm_ready; then
                WASM_ROUTE=rustup
            fi
        fi
        if [ -z "${WASM_ROUTE:-}" ]; then
            say "the rustup wasm32 target is not available here; using Debian's rustc-web and building std from source"
            apt_install rustc-web rust-web-src lld-19
            debian_wasm_ready || die "Debian's rustc-web route did not install completely"
            WASM_ROUTE=debian
        fi
    fi
    if [ "$WASM_ROUTE" = debian ]; then
        # Only for the wasm build: build-std needs an explicit target, and a
        # separate target dir keeps the two compilers from invalidating each
        # other's artifacts.
        export RUSTC=/usr/bin/rustc
        export RUSTC_BOOTSTRAP=1
        export CARGO_UNSTABLE_BUILD_STD=std,panic_abort
        export CARGO_TARGET_WASM32_UNKNOWN_UNKNOWN_LINKER=wasm-ld-19
        export CARGO_TARGET_DIR="$ROOT/target/wasm-debian"
    else
        export CARGO_TARGET_DIR="$ROOT/target/wasm"
    fi
}

ensure_trunk() {
    if command -v trunk >/dev/null && [ "$(trunk --version 2>/dev/null)" = "trunk $TRUNK_VERSION" ]; then
        return
    fi
    say "installing trunk $TRUNK_VERSION with cargo (about 10 minutes on 2 cores, once)"
    cargo install trunk --version "$TRUNK_VERSION" --locked --quiet
}

ensure_wasm_bindgen() {
    local want
    want="$(wasm_bindgen_version)"
    [ -n "$want" ] || die "no wasm-bindgen in Cargo.lock"
    if command -v wasm-bindgen >/dev/null && [ "$(wasm-bindgen --version 2>/dev/null)" = "wasm-bindgen $want" ]; then
        return
    fi
    say "installing wasm-bindgen-cli $want with cargo (about 3 minutes, once)"
    # Not --locked: its lock file names a crate version the registry lacks.
    cargo install wasm-bindgen-cli --version "=$want" --quiet
}

# wasm-opt shrinks release builds. Debian's binaryen is too old for current
# rustc output, npm's works. Without npm, trunk downloads it when online.
ensure_wasm_opt() {
    if command -v wasm-opt >/dev/null && wasm-opt --version 2>/dev/null | grep -q "version $BINARYEN_VERSION"; then
        TRUNK_OFFLINE_FLAG=--offline
        return
    fi
    if command -v npm >/dev/null; then
        say "installing wasm-opt (npm package binaryen@$BINARYEN_VERSION) into $TOOLS_DIR"
        mkdir -p "$TOOLS_DIR"
        npm install --silent --no-audit --no-fund --prefix "$TOOLS_DIR" "binaryen@$BINARYEN_VERSION" >/dev/null
        TRUNK_OFFLINE_FLAG=--offline
    else
        say "npm not found: trunk will download wasm-opt itself (needs internet)"
        TRUNK_OFFLINE_FLAG=
    fi
}

ensure_browser() {
    if [ -x /usr/bin/chromium ] && [ -x /usr/bin/chromedriver ]; then
        return
    fi
    say "installing Chromium and ChromeDriver for the browser tests"
    apt_install chromium chromium-driver
}

# A Python virtual environment with the reference libraries the
# cross-checks compare against (tests/python/requirements.txt).
ensure_python_refs() {
    PY_ENV="$TOOLS_DIR/pyenv"
    local want="$ROOT/tests/python/requirements.txt"
    if [ -x "$PY_ENV/bin/python" ] && cmp -s "$want" "$PY_ENV/requirements.txt"; then
        return
    fi
    command -v python3 >/dev/null || die "python3 not found: install Python 3 for the reference cross-checks"
    say "creating a Python environment with scipy for the cross-checks in $PY_ENV"
    python3 -m venv "$PY_ENV" || { apt_install python3-venv; python3 -m venv "$PY_ENV"; }
    "$PY_ENV/bin/pip" install --quiet --disable-pip-version-check -r "$want"
    cp "$want" "$PY_ENV/requirements.txt"
}

# Everything the browser build needs.
ensure_web_toolchain() {
    require_cargo
    # trunk's post-build hook (scripts/externalise-scripts.py) needs it.
    command -v python3 >/dev/null || die "python3 not found: the app build runs a small Python step; install Python 3"
    ensure_wasm_compiler
    ensure_trunk
    ensure_wasm_bindgen
    ensure_wasm_opt
    say "wasm toolchain ready (route: $WASM_ROUTE)"
}

# Build the app into dist/ (release, optimised).
build_app() {
    say "building the app (the first build takes several minutes)"
    (cd "$ROOT" && trunk build --release $TRUNK_OFFLINE_FLAG)
}

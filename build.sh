#!/usr/bin/env bash
# Forefield build entry point. Every subcommand installs what it is missing, idempotently.
#   ./build.sh serve   build the wasm page and serve www/ on 127.0.0.1 (PORT, default 8765)
#   ./build.sh dist    publish the page: dist/ for any static host, dist/forefield.html in one file
#   ./build.sh test    formatting, lints (native and wasm), all Rust tests, wasm build, browser tests
#   ./build.sh sample  regenerate the committed demo grids in sample-grids/
#   ./build.sh bench   native and in-browser benchmarks, printed as JSON lines
#   ./build.sh fuzz [SECONDS]  each cargo-fuzz target for SECONDS (default 60), nightly
set -euo pipefail

cd "$(dirname "$0")"
ROOT="$(pwd)"
WASM_TARGET=wasm32-unknown-unknown
PORT="${PORT:-8765}"
# Cargo puts its outputs here; honour an override so a checkout can share a build cache.
TARGET_DIR="${CARGO_TARGET_DIR:-target}"

say() { printf '\n==> %s\n' "$*"; }

wasm_bindgen_version() {
    # The CLI must match the crate exactly; Cargo.lock pins the crate.
    awk '/^name = "wasm-bindgen"$/ { getline; gsub(/[^0-9.]/, ""); print; exit }' Cargo.lock
}

ensure_wasm_toolchain() {
    if ! rustup target list --installed | grep -qx "$WASM_TARGET"; then
        say "adding Rust target $WASM_TARGET"
        rustup target add "$WASM_TARGET"
    fi
    local want have
    want="$(wasm_bindgen_version)"
    have="$(wasm-bindgen --version 2>/dev/null | awk '{print $2}' || true)"
    if [ "$have" != "$want" ]; then
        say "installing wasm-bindgen-cli $want (found '${have:-none}')"
        cargo install wasm-bindgen-cli --version "$want"
    fi
}

ensure_chromium() {
    if [ ! -x /usr/bin/chromium ]; then
        say "installing Debian chromium"
        if [ "$(id -u)" -eq 0 ]; then
            apt-get update && apt-get install -y chromium
        else
            sudo apt-get update && sudo apt-get install -y chromium
        fi
    fi
}

ensure_firefox() {
    if [ ! -x /usr/bin/firefox-esr ]; then
        say "installing Debian firefox-esr"
        if [ "$(id -u)" -eq 0 ]; then
            apt-get update && apt-get install -y --no-install-recommends firefox-esr
        else
            sudo apt-get update && sudo apt-get install -y --no-install-recommends firefox-esr
        fi
    fi
}

ensure_node_deps() {
    # Reinstall whenever the lock file changed since the last install.
    if ! cmp -s tests/browser/package-lock.json tests/browser/node_modules/.installed-lock.json; then
        say "installing browser-test dependencies (npm ci)"
        (cd tests/browser && npm ci --no-audit --no-fund && cp package-lock.json node_modules/.installed-lock.json)
    fi
}

build_wasm() {
    ensure_wasm_toolchain
    say "building release wasm (simd128)"
    CARGO_TARGET_WASM32_UNKNOWN_UNKNOWN_RUSTFLAGS="-C target-feature=+simd128 -D warnings" \
        cargo build --release --target "$WASM_TARGET" -p forefield-wasm
    say "generating www/pkg with wasm-bindgen"
    wasm-bindgen --target web --no-typescript --out-dir www/pkg \
        "$TARGET_DIR/$WASM_TARGET/release/forefield_wasm.wasm"
    # The run worker is a classic script (the one-file page runs it from a blob: URL, where
    # module workers are refused); its glue drives the same wasm, so only one copy is kept.
    # The glue keeps its default name until copied: the wasm imports its helpers under it.
    local classic="$TARGET_DIR/wasm-classic"
    wasm-bindgen --target no-modules --no-typescript --out-dir "$classic" \
        "$TARGET_DIR/$WASM_TARGET/release/forefield_wasm.wasm"
    cmp -s www/pkg/forefield_wasm_bg.wasm "$classic/forefield_wasm_bg.wasm" \
        || { echo "the two wasm-bindgen targets wrote different wasm" >&2; exit 1; }
    cp "$classic/forefield_wasm.js" www/pkg/forefield_wasm_classic.js
    rm -rf www/sample-grids
    mkdir -p www/sample-grids
    cp sample-grids/*.tif sample-grids/*.json www/sample-grids/ 2>/dev/null || cp sample-grids/*.tif www/sample-grids/
}

build_cli() {
    say "building the forefield command line (release)"
    cargo build --release -p forefield-cli
}

# Starts the static server in the background and waits until it answers.
start_server() {
    local port="$1"
    "$TARGET_DIR"/release/forefield serve --dir www --port "$port" >"$TARGET_DIR/serve-$port.log" 2>&1 &
    SERVER_PID=$!
    for _ in $(seq 1 50); do
        if (exec 3<>"/dev/tcp/127.0.0.1/$port") 2>/dev/null; then return 0; fi
        sleep 0.1
    done
    echo "server did not start; log:" >&2
    cat "$TARGET_DIR/serve-$port.log" >&2
    return 1
}

free_port() {
    python3 -c 'import socket; s=socket.socket(); s.bind(("127.0.0.1",0)); print(s.getsockname()[1])' 2>/dev/null \
        || echo 18765
}

build_dist() {
    say "publishing the page to dist/"
    "$TARGET_DIR"/release/forefield dist --from www --out dist
}

cmd_dist() {
    build_wasm
    build_cli
    build_dist
}

cmd_serve() {
    build_wasm
    build_cli
    say "open http://127.0.0.1:$PORT/"
    exec "$TARGET_DIR"/release/forefield serve --dir www --port "$PORT"
}

cmd_test() {
    local started
    started=$(date +%s)
    say "cargo fmt --check"
    cargo fmt --all -- --check
    say "clippy (native, all targets, -D warnings)"
    cargo clippy --workspace --all-targets -- -D warnings
    ensure_wasm_toolchain
    say "clippy (wasm32, -D warnings)"
    cargo clippy -p forefield-wasm -p forefield-engine --target "$WASM_TARGET" -- -D warnings
    say "cargo test (workspace)"
    cargo test --workspace
    # Running them is ./build.sh fuzz (nightly, instrumented); here they must still compile.
    say "fuzz targets compile (stable, uninstrumented)"
    cargo build --manifest-path crate/fuzz/Cargo.toml --target-dir "$TARGET_DIR/fuzz-check"
    build_wasm
    build_cli
    build_dist
    ensure_chromium
    ensure_firefox
    ensure_node_deps
    local port
    port="$(free_port)"
    start_server "$port"
    trap 'kill $SERVER_PID 2>/dev/null || true' EXIT
    say "browser tests (headless Debian chromium) against http://127.0.0.1:$port/"
    # The export tests compare the page's files with the command line's.
    (cd tests/browser && FOREFIELD_URL="http://127.0.0.1:$port/" FOREFIELD_DIST="$ROOT/dist" \
        FOREFIELD_CLI="$(cd "$ROOT" && realpath "$TARGET_DIR/release/forefield")" \
        node --test --test-concurrency=1)
    kill "$SERVER_PID" 2>/dev/null || true
    trap - EXIT
    say "all tests passed in $(( $(date +%s) - started )) s"
}

cmd_sample() {
    build_cli
    say "writing the demo valley to sample-grids/"
    "$TARGET_DIR"/release/forefield sample --out sample-grids
}

cmd_bench() {
    build_wasm
    build_cli
    ensure_chromium
    ensure_node_deps
    if [ ! -f sample-grids/large/valley_dem.tif ]; then
        say "generating the large benchmark valley (1024 x 1024) in sample-grids/large/"
        "$TARGET_DIR"/release/forefield sample --size 1024 --out sample-grids/large
    fi
    say "native benchmark"
    local native
    native="$("$TARGET_DIR"/release/forefield bench --grids sample-grids/large)"
    echo "$native"
    local port
    port="$(free_port)"
    rm -rf www/bench-grids && mkdir -p www/bench-grids && cp sample-grids/large/*.tif www/bench-grids/
    start_server "$port"
    trap 'kill $SERVER_PID 2>/dev/null || true; rm -rf "$ROOT/www/bench-grids"' EXIT
    say "wasm benchmark (headless Debian chromium)"
    (cd tests/browser && NATIVE_BENCH="$native" FOREFIELD_URL="http://127.0.0.1:$port/" node bench.mjs)
}

FUZZ_TARGETS=(geotiff heightmap_png geojson scenario run_file)

# Seeds from the fixtures and the sample, plus a small recorded run, so libFuzzer starts from
# real files; crashes land in crate/fuzz/artifacts/TARGET/ and become regression tests.
fuzz_corpus() {
    local corpus=crate/fuzz/corpus tiny
    mkdir -p "$corpus"/{geotiff,heightmap_png,geojson,scenario,run_file}
    cp tests/fixtures/gdal_*.tif "$corpus/geotiff/"
    cp sample-grids/*.geojson tests/fixtures/*.geojson "$corpus/geojson/"
    cp sample-grids/*.json "$corpus/scenario/"
    tiny="$(mktemp -d)"
    "$TARGET_DIR"/release/forefield sample --size 24 --out "$tiny" >/dev/null
    sed 's/"n_years": [0-9]*/"n_years": 3/; s/"output_years": \[[^]]*\]/"output_years": []/' \
        sample-grids/valley_warming.json >"$tiny/scenario.json"
    "$TARGET_DIR"/release/forefield run "$tiny/scenario.json" --out "$tiny/out" \
        --vegetation "$tiny/valley_vegetation.tif" --layers stage --formats tif >/dev/null
    cp "$tiny/out/timeline.fftl" "$corpus/run_file/"
    cp "$tiny/valley_dem.tif" "$corpus/geotiff/tiny_dem.tif"
    rm -rf "$tiny"
}

cmd_fuzz() {
    local seconds="${1:-60}"
    rustup toolchain list | grep -q '^nightly' || rustup toolchain install nightly --profile minimal
    command -v cargo-fuzz >/dev/null || cargo install cargo-fuzz
    build_cli
    fuzz_corpus
    for target in "${FUZZ_TARGETS[@]}"; do
        say "fuzzing $target for $seconds s"
        cargo +nightly fuzz run --fuzz-dir crate/fuzz "$target" "crate/fuzz/corpus/$target" \
            -- -max_total_time="$seconds" -rss_limit_mb=2048
    done
}

case "${1:-}" in
    serve) cmd_serve ;;
    dist) cmd_dist ;;
    test) cmd_test ;;
    sample) cmd_sample ;;
    bench) cmd_bench ;;
    fuzz) cmd_fuzz "${2:-60}" ;;
    *)
        echo "usage: ./build.sh serve|dist|test|sample|bench|fuzz [SECONDS]" >&2
        exit 2
        ;;
esac

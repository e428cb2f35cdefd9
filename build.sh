#!/usr/bin/env bash
# Rectifield build and test driver.  See `./build.sh --help` and DEVELOPERS.md.
set -euo pipefail

ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
cd "$ROOT"

DIST="$ROOT/dist"
WEB="$ROOT/target/web"          # intermediate files of the page build
WASM_TARGET=wasm32-unknown-unknown
CRATE=rectifield
# Features beyond the wasm MVP that Rust's wasm32 target emits by default and that
# every current browser has; named one by one (not `-all`) so that wasm-opt never
# introduces a feature a browser lacks.
WASM_OPT_FEATURES=(--enable-bulk-memory --enable-nontrapping-float-to-int
  --enable-sign-ext --enable-reference-types --enable-multivalue
  --enable-mutable-globals)

export DEBIAN_FRONTEND=noninteractive
if [ -f "$HOME/.cargo/env" ]; then
  # shellcheck disable=SC1091
  . "$HOME/.cargo/env"
fi
case ":$PATH:" in *":$HOME/.cargo/bin:"*) ;; *) export PATH="$HOME/.cargo/bin:$PATH" ;; esac

usage() {
  cat <<'EOF'
Usage: ./build.sh [COMMAND]

Commands:
  (none)    Build the offline page into dist/ (installs missing build tools first:
            the wasm32 Rust target, wasm-bindgen-cli at the version in Cargo.lock,
            the npm packages pinned in package-lock.json, and Debian's zopfli).  Open
            dist/index.html by double-click: it is the whole page in one file
            (copy it alone, or the dist folder for the installable copy).
  test      The one test command (what CI runs): installs its own prerequisites
            (apt: chromium, chromium-driver, firefox-esr, ngspice, zopfli), then rustfmt,
            clippy (native and wasm32), native tests, wasm-bindgen tests in Node
            and headless Chromium, the engine dependency-boundary check, builds
            dist/, and runs the end-to-end page tests in headless Chromium and
            headless Firefox.  Prints the time of each stage.
  bench     Benchmark against ngspice (issue #10): builds dist/, then times the
            engine natively and in headless Chromium and ngspice at matched
            accuracy and at accuracy levels 1e-2 to 1e-6 (each tool against
            its own converged answer), with the scaling, size and start-up
            figures; prints the targets as met / not met and writes
            bench/report.md and .json (about 5 minutes).  `bench --quick`
            runs fewer repetitions and no accuracy ladder.  Not part of `test`.
  clean     Remove dist/ and target/web/.  `clean --all` also runs `cargo clean`
            and removes node_modules/.
  -h, --help  This text.
EOF
}

# ---------------------------------------------------------------- helpers

T_START=$(date +%s)
STAGE_TIMES=()

say() { printf '\n==> %s\n' "$*"; }
die() { printf 'build.sh: %s\n' "$*" >&2; exit 1; }

# stage NAME CMD...: run CMD, print its elapsed time, keep it for the summary.
stage() {
  local name="$1"; shift
  local t0 t1
  say "$name"
  t0=$(date +%s.%N)
  "$@"
  t1=$(date +%s.%N)
  local dt
  dt=$(awk -v a="$t0" -v b="$t1" 'BEGIN { printf "%.1f", b - a }')
  printf -- '--- %s: %s s\n' "$name" "$dt"
  STAGE_TIMES+=("$(printf '%8s s  %s' "$dt" "$name")")
}

summary() {
  say "Stage times"
  local line
  for line in "${STAGE_TIMES[@]}"; do printf '%s\n' "$line"; done
  printf '%8s s  total\n' "$(( $(date +%s) - T_START ))"
}

APT_UPDATED=0
# apt_ensure PACKAGE...: install the Debian packages that are not installed yet.
apt_ensure() {
  local missing=() p
  for p in "$@"; do
    if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q 'install ok installed'; then
      missing+=("$p")
    fi
  done
  [ ${#missing[@]} -eq 0 ] && return 0
  command -v apt-get >/dev/null || die "missing ${missing[*]} and no apt-get to install them"
  local sudo=()
  [ "$(id -u)" -eq 0 ] || sudo=(sudo)
  say "apt-get install ${missing[*]}"
  if [ "$APT_UPDATED" -eq 0 ]; then
    "${sudo[@]}" apt-get update -qq
    APT_UPDATED=1
  fi
  "${sudo[@]}" apt-get install -y -qq --no-install-recommends "${missing[@]}"
}

wasm_bindgen_version_locked() {
  awk '/^name = "wasm-bindgen"$/ { getline; gsub(/version = |"/, ""); print; exit }' Cargo.lock
}

ensure_rust() {
  command -v cargo >/dev/null || die "cargo not found: this project needs a Rust toolchain (rustup)"
  if ! rustup target list --installed 2>/dev/null | grep -qx "$WASM_TARGET"; then
    say "rustup target add $WASM_TARGET"
    rustup target add "$WASM_TARGET"
  fi
  local want have
  want=$(wasm_bindgen_version_locked)
  [ -n "$want" ] || die "no wasm-bindgen entry in Cargo.lock"
  have=$(wasm-bindgen --version 2>/dev/null | awk '{print $2}' || true)
  if [ "$have" != "$want" ] || ! command -v wasm-bindgen-test-runner >/dev/null; then
    say "cargo install wasm-bindgen-cli --version $want (found: ${have:-none})"
    # No --locked: the CLI's own lockfile does not resolve on every registry mirror.
    cargo install wasm-bindgen-cli --version "$want"
  fi
}

ensure_node() {
  if ! command -v node >/dev/null || ! command -v npm >/dev/null; then
    apt_ensure nodejs npm
  fi
  local stamp="node_modules/.rectifield-lock"
  if [ -f "$stamp" ] && cmp -s package-lock.json "$stamp" && [ -x node_modules/.bin/wasm-opt ] \
    && [ -x node_modules/.bin/terser ] && [ -f node_modules/uplot/dist/uPlot.iife.js ]; then
    return 0
  fi
  say "npm ci (pinned: package-lock.json)"
  # puppeteer-core never downloads a browser; the tests use Debian's.
  PUPPETEER_SKIP_DOWNLOAD=1 npm ci --no-audit --no-fund
  cp package-lock.json "$stamp"
}

ensure_browsers() {
  apt_ensure chromium chromium-driver firefox-esr ngspice
}

# zopfli: the gzip of the embedded engine (see bind_and_opt).
ensure_zopfli() {
  command -v zopfli >/dev/null || apt_ensure zopfli
}

prereq_build() { ensure_rust; ensure_node; ensure_zopfli; }
prereq_test() { ensure_browsers; ensure_rust; ensure_node; ensure_zopfli; }

# ---------------------------------------------------------------- the page build

build_wasm() {
  # `cargo rustc --crate-type cdylib` so that the profile's LTO is really
  # applied: with crate-type ["cdylib", "rlib"] a plain `cargo build` skips it.
  # Profile wasm-release (Cargo.toml): the release profile with opt-level "s".
  cargo rustc --lib --profile wasm-release --target "$WASM_TARGET" --crate-type cdylib
}

# newer OUT IN...: true when OUT is missing or older than any IN.
newer() {
  local out="$1"; shift
  [ -e "$out" ] || return 0
  local f
  for f in "$@"; do [ "$f" -nt "$out" ] && return 0; done
  return 1
}

bind_and_opt() {
  local raw="target/$WASM_TARGET/wasm-release/$CRATE.wasm"
  [ -f "$raw" ] || die "$raw was not built"
  mkdir -p "$WEB/bindgen"
  if newer "$WEB/bindgen/${CRATE}_bg.wasm" "$raw"; then
    # no-modules: a classic script defining the global `wasm_bindgen`, because
    # browsers refuse ES-module imports from file:// pages.
    wasm-bindgen --target no-modules --no-typescript --out-dir "$WEB/bindgen" "$raw"
  fi
  if newer "$WEB/${CRATE}_opt.wasm" "$WEB/bindgen/${CRATE}_bg.wasm"; then
    # binaryen from npm (pinned), never Debian's old wasm-opt, which silently
    # breaks wasm-bindgen output.
    node_modules/.bin/wasm-opt -O3 "${WASM_OPT_FEATURES[@]}" \
      "$WEB/bindgen/${CRATE}_bg.wasm" -o "$WEB/${CRATE}_opt.wasm"
  fi
  if newer "$WEB/${CRATE}_wasm.js" "$WEB/${CRATE}_opt.wasm"; then
    # The wasm, gzipped, as base64 in a classic script: a file:// page may not
    # fetch a .wasm.  Gzip first: base64 hides the wasm's byte patterns from the
    # HTTP/zip compression of the file itself (base64 of the raw wasm gzips to
    # about 0.52 of the wasm; the gzipped wasm in base64 to about 0.39).  The
    # page inflates it with the browser's DecompressionStream.  zopfli writes
    # standard gzip about 4 % smaller than `gzip -9`, with no name or time
    # stamp in the header, so the same wasm gives the same file.
    {
      printf '// Generated by build.sh: the Rectifield engine (WebAssembly), gzip, base64.\n'
      printf 'var RECTIFIELD_WASM_GZIP_BASE64 = "'
      zopfli -c "$WEB/${CRATE}_opt.wasm" | base64 -w0
      printf '";\n'
    } >"$WEB/${CRATE}_wasm.js.tmp"
    mv "$WEB/${CRATE}_wasm.js.tmp" "$WEB/${CRATE}_wasm.js"
  fi
}

assemble_dist() {
  # The page as separate files first (target/web/page: www/, the engine and the
  # glue, minified, uPlot), then dist/ from it: one self-contained index.html,
  # the manifest and icons of the installed copy, and sw.js.
  local stage="$WEB/page"
  rm -rf "$stage" "$DIST.tmp"
  mkdir -p "$stage"
  cp -R www/. "$stage/"
  cp "$WEB/${CRATE}_wasm.js" "$stage/${CRATE}_wasm.js"
  cp "$WEB/bindgen/${CRATE}.js" "$stage/${CRATE}_glue.js"
  # Our scripts and the wasm-bindgen glue, minified by terser (npm, pinned):
  # compress and mangle local names only (no --toplevel), so every global the
  # scripts share (wasm_bindgen, RectifieldUnits, ...) keeps its name.  About
  # 12 kB less gzipped.  The readable sources are www/ and target/web/bindgen/.
  local js
  for js in "$stage"/*.js; do
    node_modules/.bin/terser "$js" --compress --mangle --output "$js.min"
    mv "$js.min" "$js"
  done
  # The plotting library, vendored from npm (pinned in package-lock.json), with its licence.
  local up=node_modules/uplot
  [ -f "$up/dist/uPlot.iife.js" ] || die "$up missing: run npm ci (./build.sh installs it)"
  mkdir -p "$stage/vendor"
  # Its script minified from the readable source with the two Intl formatters
  # it builds at start made lazy (tools/vendor-uplot.mjs says why).
  node tools/vendor-uplot.mjs "$up" "$stage/vendor/uPlot.iife.min.js"
  cp "$up/dist/uPlot.min.css" "$stage/vendor/"
  cp "$up/LICENSE" "$stage/vendor/uPlot.LICENSE"
  # dist/index.html is the single self-contained page (the folder and the file
  # that travels alone are the same page), with the installed copy's files
  # beside it; then sw.js (every file of dist/, versioned by a hash of them).
  node tools/dist-extras.mjs page "$stage" "$DIST.tmp"
  node tools/dist-extras.mjs sw "$DIST.tmp"
  rm -rf "$DIST"
  mv "$DIST.tmp" "$DIST"
  [ -f "$DIST/index.html" ] || die "dist/index.html was not written"
}

report_dist() {
  say "dist: $DIST"
  (cd "$DIST" && ls -lR)
  printf 'total size: %s (%s bytes)\n' "$(du -sh "$DIST" | cut -f1)" "$(du -sb "$DIST" | cut -f1)"
  # The size measure of bench/run (issue #10): gzip -9 of each file, summed.
  local gz=0 f
  while IFS= read -r -d '' f; do
    gz=$((gz + $(gzip -9 -c "$f" | wc -c)))
  done < <(find "$DIST" -type f -print0)
  printf 'gzip -9 of each file, summed: %s bytes\n' "$gz"
  printf 'open: file://%s/index.html\n' "$DIST"
}

cmd_build() {
  stage "tools (rust target, wasm-bindgen-cli, npm)" prereq_build
  stage "cargo rustc (wasm-release: LTO, opt-level s)" build_wasm
  stage "wasm-bindgen + wasm-opt + embed" bind_and_opt
  stage "assemble dist/" assemble_dist
  report_dist
}

# ---------------------------------------------------------------- tests

wasm_tests() {
  # One binary per tests/wasm_*.rs; only these are built for wasm32.
  local args=() f
  for f in tests/wasm_*.rs; do
    [ -e "$f" ] || continue
    f=${f#tests/}
    args+=(--test "${f%.rs}")
  done
  [ ${#args[@]} -gt 0 ] || die "no tests/wasm_*.rs files"
  # Not `-q`: the wasm-bindgen test runner needs cargo's normal output mode.
  CARGO_TARGET_WASM32_UNKNOWN_UNKNOWN_RUNNER=wasm-bindgen-test-runner \
    cargo test --target "$WASM_TARGET" "${args[@]}"
}

wasm_tests_chromium() {
  CHROMEDRIVER="$(command -v chromedriver)" WASM_BINDGEN_USE_BROWSER=1 wasm_tests
}

clippy_wasm() {
  local args=(--lib) f
  for f in tests/wasm_*.rs; do
    [ -e "$f" ] || continue
    f=${f#tests/}
    args+=(--test "${f%.rs}")
  done
  cargo clippy --target "$WASM_TARGET" "${args[@]}" -- -D warnings
}

dep_boundary() {
  local host
  host=$(rustc -vV | sed -n 's/^host: //p')
  local forbidden='^(wasm-bindgen|js-sys|web-sys|serde-wasm-bindgen|wasm-bindgen-futures)( |$)'
  # The check must be able to fail: the wasm32 tree does contain the binding crates.
  if ! cargo tree -e normal --target "$WASM_TARGET" --prefix none | grep -Eq "$forbidden"; then
    die "dependency check is broken: wasm-bindgen not seen even in the wasm32 tree"
  fi
  local bad
  bad=$(cargo tree -e normal --target "$host" --prefix none | grep -E "$forbidden" | sort -u || true)
  if [ -n "$bad" ]; then
    printf 'native (%s) dependency tree contains binding crates:\n%s\n' "$host" "$bad" >&2
    die "engine boundary violated: keep wasm-bindgen/js-sys/web-sys wasm32-only"
  fi
  echo "native ($host) dependency tree: no wasm-bindgen, js-sys, web-sys (wasm32 tree has them)"
}

e2e_tests() {
  local files=() f
  for f in tests/e2e/*.test.mjs; do [ -e "$f" ] && files+=("$f"); done
  [ ${#files[@]} -gt 0 ] || die "no tests/e2e/*.test.mjs"
  RECTIFIELD_DIST="$DIST" \
    CHROMIUM_BIN="$(command -v chromium)" \
    FIREFOX_BIN="$(command -v firefox-esr || command -v firefox)" \
    node --test --test-concurrency=1 "${files[@]}"
}

ngspice_check() {
  # ---- ngspice cross-check hook (owned by the engine side) ----
  # Runs tests/ngspice/run (or run.sh) when it exists; it must exit non-zero on
  # any disagreement with the engine.
  if [ -x tests/ngspice/run ]; then
    tests/ngspice/run
  elif [ -f tests/ngspice/run.sh ]; then
    bash tests/ngspice/run.sh
  else
    echo "ngspice cross-check: tests/ngspice/run not present yet (skipped)"
  fi
}

parity_check() {
  # Same numbers everywhere: every built-in example through the native CLI and
  # through the wasm build in dist/, compared field by field.
  cargo build --release --bin rectifield
  node tests/parity/run.mjs target/release/rectifield
}

cmd_test() {
  stage "prerequisites (apt, rust target, wasm-bindgen-cli, npm)" prereq_test
  stage "cargo fmt --check" cargo fmt --check
  stage "clippy (native, all targets)" cargo clippy --all-targets -- -D warnings
  stage "clippy (wasm32: lib + wasm tests)" clippy_wasm
  stage "native tests (cargo test)" cargo test
  stage "wasm-bindgen tests in Node" wasm_tests
  stage "wasm-bindgen tests in headless Chromium" wasm_tests_chromium
  stage "engine boundary (cargo tree)" dep_boundary
  stage "cargo rustc (wasm-release: LTO, opt-level s)" build_wasm
  stage "wasm-bindgen + wasm-opt + embed" bind_and_opt
  stage "assemble dist/" assemble_dist
  report_dist
  stage "end-to-end page tests (Chromium, Firefox)" e2e_tests
  stage "same numbers: CLI and wasm (docs/examples)" parity_check
  stage "ngspice cross-check" ngspice_check
  summary
  echo "build.sh test: all stages passed"
}

cmd_bench() {
  # The benchmark (issue #10): builds dist/ (and the tools it needs), then
  # bench/run times the engine natively (examples/bench.rs) and in headless
  # Chromium (bench/wasm.mjs) against ngspice at matched accuracy, and writes
  # bench/report.md and bench/report.json.  Targets are printed, never asserted.
  stage "prerequisites (apt: chromium, ngspice, time)" apt_ensure chromium ngspice time
  cmd_build
  stage "benchmark (native, wasm in Chromium, ngspice, callgrind instruction counts)" python3 bench/run "$@"
  stage "extreme but legal circuits (worst case; target < 100 ms native)" cargo run --release --example extremes
  summary
}

cmd_clean() {
  rm -rf "$DIST" "$DIST.tmp" "$WEB"
  if [ "${1:-}" = "--all" ]; then
    cargo clean
    rm -rf node_modules
  fi
  echo "cleaned"
}

case "${1:-}" in
  "") cmd_build ;;
  test) cmd_test ;;
  bench) shift; cmd_bench "$@" ;;
  clean) shift; cmd_clean "$@" ;;
  -h|--help|help) usage ;;
  *) usage >&2; exit 2 ;;
esac

#!/usr/bin/env bash
# The short, bounded fuzz run: builds the five libFuzzer targets of fuzz/ and runs each for
# FUZZ_SECONDS seconds (default 15), starting from the seeds in fuzz/seeds/<target>/.
#
# Inputs that make a target fail are copied to tests/fuzz-regressions/<target>/, where the
# normal test suite (tests/tests/fuzz_regressions.rs) replays them from then on; the script
# then exits non-zero. New corpus entries go to a temporary folder and are thrown away.
#
# FUZZ_SECONDS=0 skips building and fuzzing and only replays the saved inputs.
#
# Only stable Rust is needed: the targets are built with plain cargo and the coverage
# instrumentation flags that `cargo fuzz build --sanitizer none` passes (no address sanitizer,
# which needs a nightly compiler), so nothing has to be installed; libfuzzer-sys compiles
# libFuzzer itself with the system C++ compiler. With cargo-fuzz installed, `cargo fuzz run
# <target>` inside fuzz/ works on the same project too.
set -euo pipefail
cd "$(dirname "$0")/.."

seconds=${FUZZ_SECONDS:-15}
targets=(image_reader engine_run session_edits checkpoint_loader memory_flash)
# Longest input per target: room for the larger seed images; edit lists stay short so that
# each run is quick (a long list only repeats what short ones do).
declare -A max_len=([image_reader]=16384 [engine_run]=16384 [session_edits]=1024
  [checkpoint_loader]=16384 [memory_flash]=1024)
say() { printf '\n== %s\n' "$*"; }

if [[ "$seconds" == 0 ]]; then
  say "FUZZ_SECONDS=0: no fuzzing, replaying the saved inputs"
  cargo test --release -p inkling-tests --test fuzz_regressions
  exit 0
fi

if ! command -v c++ >/dev/null; then
  echo "fuzz.sh: a C++ compiler (c++) is needed to build libFuzzer (apt-get install g++)" >&2
  exit 2
fi

host=$(rustc -vV | sed -n 's/^host: //p')
# The flags `cargo fuzz build --sanitizer none` uses (cargo-fuzz 0.13): libFuzzer's coverage
# counters and comparison tracing, `cfg(fuzzing)`, and debug assertions with overflow checks.
# An explicit --target keeps them off build scripts and proc macros, as cargo-fuzz does.
flags=(
  -Cpasses=sancov-module
  -Cllvm-args=-sanitizer-coverage-level=4
  -Cllvm-args=-sanitizer-coverage-inline-8bit-counters
  -Cllvm-args=-sanitizer-coverage-pc-table
  -Cllvm-args=-sanitizer-coverage-trace-compares
  -Cllvm-args=-simplifycfg-branch-fold-threshold=0
  -Cllvm-args=-sanitizer-coverage-stack-depth
  --cfg fuzzing
  -Cdebug-assertions
  -Coverflow-checks
  -Ccodegen-units=1
)
target_dir=$(realpath -m "${CARGO_TARGET_DIR:-target}")/fuzz
say "building the fuzz targets ($host)"
start=$SECONDS
(cd fuzz && RUSTFLAGS="${flags[*]}" cargo build --release --target "$host" \
  --target-dir "$target_dir" --bins)
bin_dir="$target_dir/$host/release"
echo "built in $((SECONDS - start)) s"

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
failed=()
for t in "${targets[@]}"; do
  say "fuzzing $t for $seconds s"
  mkdir -p "$work/corpus/$t" "$work/found/$t"
  set +e
  # The first folder gets the new corpus entries; the seeds are only read.
  # -timeout: an input running 10 s is a finding (a hang); -rss_limit_mb bounds memory.
  "$bin_dir/$t" "$work/corpus/$t" "fuzz/seeds/$t" \
    -max_total_time="$seconds" -timeout=10 -rss_limit_mb=2048 -max_len="${max_len[$t]}" \
    -artifact_prefix="$work/found/$t/" -print_final_stats=1 2>"$work/$t.log"
  status=$?
  set -e
  grep -E '^(#[0-9]+ *DONE|stat::number_of_executed_units|stat::peak_rss_mb)' "$work/$t.log" || true
  shopt -s nullglob
  found=("$work/found/$t"/*)
  shopt -u nullglob
  if ((status != 0 || ${#found[@]} > 0)); then
    tail -n 40 "$work/$t.log"
    mkdir -p "tests/fuzz-regressions/$t"
    for f in "${found[@]}"; do
      cp "$f" "tests/fuzz-regressions/$t/"
      echo "kept $(basename "$f") in tests/fuzz-regressions/$t/"
    done
    failed+=("$t")
  fi
done

say "summary"
if ((${#failed[@]} > 0)); then
  echo "findings in: ${failed[*]} (inputs kept under tests/fuzz-regressions/)"
  exit 1
fi
echo "no findings in ${#targets[@]} targets, $seconds s each"

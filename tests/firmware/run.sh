#!/usr/bin/env bash
# Builds the firmware example for one core, runs it under QEMU with scripted typing piped in,
# and prints its figures: instructions per step (and its split into
# matrix products, quantisation, scan exponentials), per keystroke (mean, 95th percentile and
# largest: for typed bytes to the first suggestions shown and to the end of the search, and
# for 12-key presses with `keys`) and per byte of
# prefill, flash and RAM from the linker's sections, and the stack high-water mark. Then it
# runs kernel_count: the core's matrix-vector kernel (SMLAD on the Cortex-M4F, the portable
# one elsewhere) checked against the portable one, and its instructions per
# multiply-accumulate. On the Cortex-M4F it then runs memory_reboot (a session that learns
# words and phrases, its user memory through a simulated reboot; see
# tests/firmware/memory_reboot.sh) and adds its figures (memory_*: the instructions learning
# adds per keystroke, mean and largest; draft_*: the cost per verified byte of a phrase
# draft, chunked against stepped); it fails if the memory read back differs.
#
# usage: tests/firmware/run.sh [--core cortex-m4f|cortex-m0plus|riscv32imc]
#                              [--profile release|release-o3] [--input FILE] [--out DIR]
#                              [--skip-unit] [--skip-memory]
#   --core       the core (default cortex-m4f): cortex-m4f builds for thumbv7em-none-eabihf
#                and runs on mps2-an386; cortex-m0plus builds for thumbv6m-none-eabi and runs
#                on mps2-an385 (a Cortex-M3: ARMv6-M code is a subset of ARMv7-M);
#                riscv32imc builds for riscv32imc-unknown-none-elf and runs on virt. The
#                QEMU command of each is the runner in firmware-example/.cargo/config.toml.
#   --profile    cargo profile of the firmware build: release (opt-level "s", the default)
#                or release-o3 (opt-level 3)
#   --input      the typed bytes; each line is one typing session, each byte a keystroke,
#                0x08 or 0x7f a backspace. Default: typing.txt next to this script on the
#                Cortex-M4F, and its first SHORT_LINES lines on the cores without an FPU
#                (their soft float makes a step about 14 to 24 times longer; the lines they
#                type give the same suggestion lines as the first lines of the full run)
#   --out        keep the results there: suggestions.txt (the firmware's standard output),
#                figures.txt (NAME VALUE per line), log.txt (its status log),
#                keystrokes.txt, keystroke_totals.txt and keypresses.txt (instructions of
#                each, one a line)
#   --skip-unit  do not run the firmware crate's unit tests on the host first
#   --skip-memory  do not run memory_reboot (calibrate.sh, which measures other shapes)
# environment: INKLING_IMAGE picks the model image built in, INKLING_DENY and INKLING_LEXICON
# the word lists (see firmware-example/README.md); the run checks that no word of the deny
# list is offered.
set -euo pipefail

here=$(cd "$(dirname "$0")" && pwd)
firmware="$here/../../firmware-example"
core=cortex-m4f
profile=release
input=""
out=""
unit=1
memory=1
# Lines of typing.txt the cores without an FPU type by default (54 keystrokes).
SHORT_LINES=4
while [ $# -gt 0 ]; do
  case "$1" in
    --core) core=$2; shift 2 ;;
    --profile) profile=$2; shift 2 ;;
    --input) input=$2; shift 2 ;;
    --out) out=$2; shift 2 ;;
    --skip-unit) unit=0; shift ;;
    --skip-memory) memory=0; shift ;;
    *) echo "run.sh: unknown argument $1" >&2; exit 2 ;;
  esac
done
case "$profile" in release|release-o3) ;; *) echo "run.sh: --profile must be release or release-o3" >&2; exit 2 ;; esac
case "$core" in
  cortex-m4f) target=thumbv7em-none-eabihf; qemu=qemu-system-arm; qemu_package=qemu-system-arm ;;
  cortex-m0plus) target=thumbv6m-none-eabi; qemu=qemu-system-arm; qemu_package=qemu-system-arm ;;
  riscv32imc) target=riscv32imc-unknown-none-elf; qemu=qemu-system-riscv32; qemu_package=qemu-system-misc ;;
  *) echo "run.sh: --core must be cortex-m4f, cortex-m0plus or riscv32imc" >&2; exit 2 ;;
esac
keep=1
if [ -z "$out" ]; then
  out=$(mktemp -d)
  keep=0
  trap 'rm -rf "$out"' EXIT
fi
mkdir -p "$out"
if [ -z "$input" ]; then
  input="$here/typing.txt"
  if [ "$core" != cortex-m4f ]; then
    head -n "$SHORT_LINES" "$here/typing.txt" >"$out/typed.txt"
    input="$out/typed.txt"
  fi
fi
[ -f "$input" ] || { echo "run.sh: no input file $input" >&2; exit 2; }
input=$(cd "$(dirname "$input")" && pwd)/$(basename "$input")

# The firmware's own target dir, whatever the caller's is: a cargo running this script (a
# test) may hold the lock on its own.
export CARGO_TARGET_DIR="$firmware/target"

if ! command -v "$qemu" >/dev/null; then
  echo "== installing $qemu_package" >&2
  sudo=""
  [ "$(id -u)" -eq 0 ] || sudo=sudo
  $sudo apt-get update -qq && $sudo apt-get install -y -qq "$qemu_package" >/dev/null
fi
if ! rustup target list --installed | grep -qx "$target"; then
  echo "== adding the rustup target $target" >&2
  rustup target add "$target"
fi
if ! rustup component list --installed | grep -q '^llvm-tools'; then
  rustup component add llvm-tools
fi

cd "$firmware"
if [ "$unit" -eq 1 ]; then
  echo "== unit tests of the board-independent parts, on the host" >&2
  host=$(rustc -vV | sed -n 's/^host: //p')
  cargo test -j 2 --quiet --lib --target "$host" >&2
fi

echo "== building the firmware for $core ($target, profile $profile)" >&2
cargo build -j 2 --quiet --profile "$profile" --target "$target"
elf="$CARGO_TARGET_DIR/$target/$profile/inkling-firmware-example"

echo "== running it in QEMU ($qemu)" >&2
# `cargo run` starts the core's runner from .cargo/config.toml (cargo replaces itself with
# it, so its exit status is the firmware's). Typed input reaches the firmware through
# semihosting; QEMU itself must not read stdin.
run() {
  timeout "$1" cargo run -q --profile "$profile" --target "$target" --bin "$2"
}
status=0
run 900 inkling-firmware-example <"$input" >"$out/suggestions.txt" 2>"$out/log.txt" || status=$?
if [ "$status" -ne 0 ]; then
  echo "run.sh: the firmware exited with status $status (124: timed out)" >&2
  cat "$out/log.txt" >&2
  exit 1
fi

# No word of the deny list built into flash is ever offered. The session matches the list in
# any case; its words and the ones checked here are ASCII, so `tolower` is that folding.
deny_list=${INKLING_DENY-../data/lexicon/deny-callouts.txt}
if [ -n "$deny_list" ]; then
  awk -F '\t' -v list="$deny_list" '
    BEGIN { while ((getline w < list) > 0) deny[tolower(w)] = 1; n = length(deny) }
    { for (i = 2; i <= NF; i += 2) if (tolower($i) in deny) {
        printf "run.sh: line %d offers %s, a word of the deny list %s\n", NR, $i, list > "/dev/stderr"
        bad = 1 } }
    END { if (bad) exit 1
          printf "== the deny list (%d words): none offered in %d lines\n", n, NR > "/dev/stderr" }' \
    "$out/suggestions.txt"
fi

sed -n 's/^figure //p' "$out/log.txt" | grep -v '^keystroke \|^keystroke_total \|^keypress ' >"$out/figures.txt"
sed -n 's/^figure keystroke //p' "$out/log.txt" >"$out/keystrokes.txt"
sed -n 's/^figure keystroke_total //p' "$out/log.txt" >"$out/keystroke_totals.txt"
sed -n 's/^figure keypress //p' "$out/log.txt" >"$out/keypresses.txt"
# Mean, 95th percentile (nearest rank) and largest of one instruction count a line.
spread() {
  sort -n "$2" | awk -v name="$1" '{ v[NR] = $1; s += $1 }
    END { if (NR == 0) exit
          r = int(0.95 * NR + 0.999999); if (r < 1) r = 1
          printf "%s_instructions_mean %d\n%s_instructions_p95 %d\n%s_instructions_max %d\n",
                 name, s / NR, name, v[r], name, v[NR] }'
}
spread keystroke "$out/keystrokes.txt" >>"$out/figures.txt"
spread keystroke_total "$out/keystroke_totals.txt" >>"$out/figures.txt"
spread keypress "$out/keypresses.txt" >>"$out/figures.txt"

echo "== counting the matrix-vector kernel alone in QEMU (kernel_count)" >&2
status=0
run 300 kernel_count </dev/null >/dev/null 2>"$out/kernel_log.txt" || status=$?
if [ "$status" -ne 0 ]; then
  echo "run.sh: kernel_count exited with status $status (4: the core's kernel differs from the portable one)" >&2
  cat "$out/kernel_log.txt" >&2
  exit 1
fi
sed -n 's/^figure \(kernel_\)/\1/p' "$out/kernel_log.txt" >>"$out/figures.txt"
if [ "$core" = cortex-m4f ] && [ "$memory" -eq 1 ]; then
  echo "== the user memory (memory_reboot): learning's cost per keystroke, a simulated reboot" >&2
  status=0
  run 300 memory_reboot </dev/null >/dev/null 2>"$out/memory_log.txt" || status=$?
  if [ "$status" -ne 0 ] || ! grep -q 'survived the reboot' "$out/memory_log.txt"; then
    echo "run.sh: memory_reboot failed (exit status $status)" >&2
    cat "$out/memory_log.txt" >&2
    exit 1
  fi
  sed -n 's/^figure \(memory_\|draft_\)/\1/p' "$out/memory_log.txt" >>"$out/figures.txt"
fi
# Instructions per weight of a whole step (x1000), the figure the budget's cost model uses.
awk '$1 == "step_instructions" { s = $2 } $1 == "step_macs" { m = $2 }
     END { if (m > 0) printf "step_instructions_per_weight_milli %d\n", 1000 * s / m }' \
  "$out/figures.txt" >>"$out/figures.txt"
# Sections: text (code and the model image, in flash), data (initial values in flash, live
# in RAM), bss (zeroed RAM).
# Summed by section name: the plain llvm-size totals would count riscv-rt's .stack (the free
# RAM left to the stack) as bss.
size_tool=$(ls "$(rustc --print sysroot)"/lib/rustlib/*/bin/llvm-size | head -n 1)
read -r text data bss < <("$size_tool" -A "$elf" | awk '
  NR <= 2 || NF < 3 { next }
  $1 == ".data" { d += $2; next }
  $1 == ".bss" || $1 == ".uninit" { b += $2; next }
  $1 ~ /^\.(debug|comment|symtab|strtab|shstrtab|heap$|stack$)/ || $1 ~ /attributes$/ { next }
  { t += $2 }
  END { print t + 0, d + 0, b + 0 }')
{
  echo "flash_text_bytes $text"
  echo "flash_data_bytes $data"
  echo "ram_bss_bytes $bss"
  echo "flash_bytes $((text + data))"
  echo "ram_static_bytes $((data + bss))"
  stack=$(awk '$1 == "stack_used_bytes" { print $2 }' "$out/figures.txt")
  echo "ram_total_bytes $((data + bss + stack))"
} >>"$out/figures.txt"

echo "== figures ($core, profile $profile; instruction counts, not cycles)"
cat "$out/figures.txt"
echo "== suggestions: $(wc -l <"$out/suggestions.txt") lines (one per keystroke)"
[ "$keep" -eq 0 ] || echo "== results kept in $out"

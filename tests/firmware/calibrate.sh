#!/usr/bin/env bash
# Measures the firmware on models of several shapes on one core, for that core's cost model
# in `inkling budget --core`:
# for each shape it draws a random checkpoint (tests/reference/make_checkpoint.py), converts it
# (`inkling convert`), builds the firmware with it and runs the first lines of the scripted
# typing (tests/firmware/typing.txt) in QEMU (run.sh; random weights make long searches, so
# the whole script would take many minutes a shape): 8 lines on the Cortex-M4F, 2 on the
# cores without an FPU (whose steps are 12 to 20 times longer). It writes one line of
# dimensions and figures a shape to tests/firmware/calibration.txt (Cortex-M4F) or
# tests/firmware/calibration-CORE.txt (the others). Random weights make a search far longer than a
# trained model's, so the same typing runs last on the bundled demo model (models/demo.inkl,
# marked trained=1): `inkling budget` takes the search length per keystroke from it.
#
# usage: tests/firmware/calibrate.sh [--core cortex-m4f|cortex-m0plus|riscv32imc]
#                                    [--inkling PATH]
#   --core     the core (default cortex-m4f), as run.sh takes it
#   --inkling  the inkling binary (default: target/release/inkling under CARGO_TARGET_DIR or
#              the repository)
# The instruction counts are exact under `-icount shift=0`, so a re-run gives the same file.
set -euo pipefail

here=$(cd "$(dirname "$0")" && pwd)
root=$(cd "$here/../.." && pwd)
inkling="${CARGO_TARGET_DIR:-$root/target}/release/inkling"
core=cortex-m4f
while [ $# -gt 0 ]; do
  case "$1" in
    --core) core=$2; shift 2 ;;
    --inkling) inkling=$2; shift 2 ;;
    *) echo "calibrate.sh: unknown argument $1" >&2; exit 2 ;;
  esac
done
[ -x "$inkling" ] || { echo "calibrate.sh: no inkling binary at $inkling (cargo build --release -p inkling-host)" >&2; exit 2; }

case "$core" in
  cortex-m4f) out="$here/calibration.txt"; lines=8; board="mps2-an386" ;;
  cortex-m0plus) out="$here/calibration-$core.txt"; lines=2; board="mps2-an385, thumbv6m code" ;;
  riscv32imc) out="$here/calibration-$core.txt"; lines=2; board="virt" ;;
  *) echo "calibrate.sh: --core must be cortex-m4f, cortex-m0plus or riscv32imc" >&2; exit 2 ;;
esac
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
head -n "$lines" "$here/typing.txt" >"$work/typing.txt"
{
  echo "# Firmware figures per model shape, $core (QEMU $board, -icount shift=0, profile release,"
  echo "# the first $lines lines of typing.txt). Written by tests/firmware/calibrate.sh --core $core;"
  echo "# one shape a line, NAME=VALUE fields."
} >"$work/calibration.txt"

# Shapes: d_model d_inner d_state blocks. They fit the 128 KiB of RAM in firmware-example/memory/ with 3 beams.
shapes=(
  "32 64 8 1"
  "64 128 16 1"
  "48 96 4 2"
  "96 192 8 2"
  "128 128 8 2"
)
# Runs the typing on image $1 (results in $work/$2) and writes one calibration line: the
# fields $3, then the figures the cost model uses.
measure() {
  local image=$1 name=$2 fields=$3 key value
  INKLING_IMAGE="$image" "$here/run.sh" --core "$core" --skip-unit --skip-memory --input "$work/typing.txt" \
    --out "$work/$name" >/dev/null
  while read -r key value; do
    case "$key" in
      image_bytes|step_macs|step_instructions|step_matvec_instructions|step_quantise_instructions|\
      step_scan_exp_instructions|keystroke_instructions_*|keystroke_total_instructions_*|keystroke_search_steps_mean|keypress_instructions_*|ram_total_bytes|\
      prefill_instructions_per_byte|stack_used_bytes|flash_text_bytes|kernel_*_instructions_per_mac_milli)
        fields="$fields $key=$value" ;;
    esac
  done <"$work/$name/figures.txt"
  echo "$fields" >>"$work/calibration.txt"
}
for shape in "${shapes[@]}"; do
  read -r d i n blocks <<<"$shape"
  name="d${d}_i${i}_n${n}_l${blocks}"
  echo "== $name" >&2
  python3 "$root/tests/reference/make_checkpoint.py" --d "$d" --i "$i" --n "$n" \
    --blocks "$blocks" --seed 1 -o "$work/$name.safetensors" >/dev/null
  "$inkling" convert "$work/$name.safetensors" --out "$work/$name.inkl" >/dev/null
  measure "$work/$name.inkl" "$name" "d_model=$d d_inner=$i d_state=$n blocks=$blocks"
done
# The trained demo model: its dimensions from `inkling inspect`.
demo="$root/models/demo.inkl"
read -r d i n blocks < <("$inkling" inspect "$demo" --json | python3 -c \
  'import json, sys; d = json.load(sys.stdin)["dims"]; print(d["d_model"], d["d_inner"], d["d_state"], d["blocks"])')
echo "== demo (trained)" >&2
measure "$demo" demo "d_model=$d d_inner=$i d_state=$n blocks=$blocks trained=1"
mv "$work/calibration.txt" "$out"
echo "wrote $out" >&2

#!/usr/bin/env bash
# Builds and runs the firmware example's memory_reboot program on an emulated Cortex-M4F
# (QEMU mps2-an386): a session that learns the start of the scenario logbook, its user
# memory saved word by word to a RAM-backed NOR flash, read back after a simulated reboot.
# Prints its figures: the instructions learning adds per keystroke (mean and largest, push
# and the whole search, against the same session without a memory), per learned word saved,
# and for loading after the reboot, and the RAM and flash of the memory. Fails if the memory
# read back differs from the one saved.
#
# usage: tests/firmware/memory_reboot.sh
# environment: INKLING_IMAGE picks the model image built in (see firmware-example/README.md).
set -euo pipefail

here=$(cd "$(dirname "$0")" && pwd)
cd "$here/../../firmware-example"
cargo build --release --bin memory_reboot
log=$(mktemp)
trap 'rm -f "$log"' EXIT
set +e
cargo run --release --bin memory_reboot </dev/null 2>"$log" >/dev/null
status=$?
set -e
grep -E '^(figure|note) ' "$log" | sed 's/^figure //'
if ((status != 0)) || ! grep -q 'survived the reboot' "$log"; then
  echo "memory_reboot failed (exit status $status)" >&2
  tail -n 20 "$log" >&2
  exit 1
fi

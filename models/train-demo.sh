#!/usr/bin/env bash
# The recipe of the bundled demo model: from a fresh clone to models/demo.safetensors and
# models/demo.inkl. About 27 minutes on an otherwise idle 2-core workstation.
set -euo pipefail
cd "$(dirname "$0")/.."
data/open/prepare.sh                      # King James Bible from Debian's bible-kjv-text, held-out books split off
python3 data/scenario/generate.py         # the invented scenario text (already committed; regenerated identically)
cargo build --release -p inkling-host
inkling=target/release/inkling
# The scenario text is listed three times so that it is about a quarter of the windows drawn
# (the Bible alone is ten times its size); its held-out tail is the same in each copy.
"$inkling" train data/open/kjv-train.txt data/scenario/train.txt data/scenario/train.txt \
  data/scenario/train.txt --config small --steps 12000 --batch 32 --seconds 1680 --holdout 0.01 \
  --seed 7 --out models/demo.safetensors
"$inkling" convert models/demo.safetensors -o models/demo.inkl
"$inkling" eval models/demo.inkl --text data/open/kjv-heldout.txt --against models/demo.safetensors

#!/usr/bin/env bash
# The recipe of the bundled demo model: the base model (models/train-base.sh) fine-tuned on the
# invented scenario's pager messages, from a fresh clone to models/demo.safetensors and
# models/demo.inkl. At most 10 minutes of training on 2 cores (--seconds 600).
set -euo pipefail
cd "$(dirname "$0")/.."
python3 data/general/prepare.py           # the general corpus, mixed in so English is not forgotten
python3 data/scenario/generate.py         # the invented scenario text (committed; regenerated identically)
cargo build --release -p inkling-host
inkling="${CARGO_TARGET_DIR:-target}/release/inkling"
g=data/general/train
# The scenario text (420 KB) weighted so that about half the windows drawn are pager messages;
# the other half is the base model's own corpus, at a third of its peak learning rate.
"$inkling" train --from models/base.safetensors data/scenario/train.txt@34 \
  $g/wordnet-examples.txt@2 $g/wordnet-definitions.txt $g/gcide.txt $g/jargon.txt \
  $g/python-docs.txt $g/web-bible.txt $g/debian-reference.txt $g/dialogues.txt@8 \
  --steps 20000 --seconds 600 --batch 32 --lr 1e-3 --holdout 0.01 --seed 7 \
  --out models/demo.safetensors
"$inkling" convert models/demo.safetensors -o models/demo.inkl
"$inkling" eval models/demo.inkl --against models/demo.safetensors --text data/scenario/heldout.txt \
  --text data/general/heldout/wordnet-examples.txt --savings --baseline-corpus data/scenario/train.txt \
  --max-bytes 2000

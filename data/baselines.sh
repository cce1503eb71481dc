#!/usr/bin/env bash
# Compression baselines for the text files, in bits per byte (8 x compressed bytes / original
# bytes): gzip -9, xz -9e, and the order-0 entropy of the byte histogram. A model's
# cross-entropy on the same file, in bits per byte, is directly comparable.
# Usage: data/baselines.sh [FILE...]   (default: the scenario's two train and held-out pairs;
# given four files, read as train, held-out, train, held-out, it also measures each held-out
# file after its train file)
set -euo pipefail

here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
if (($# == 0)); then
    set -- "$here/scenario/train.txt" "$here/scenario/heldout.txt" \
        "$here/scenario/logbook-train.txt" "$here/scenario/logbook-heldout.txt"
fi

bpb() { awk -v c="$1" -v n="$2" 'BEGIN { printf "%.3f", 8 * c / n }'; }

echo "| file | bytes | gzip -9 | xz -9e | order-0 entropy |"
echo "|---|---|---|---|---|"
for f in "$@"; do
    [[ -r $f ]] || { echo "baselines.sh: cannot read $f" >&2; exit 1; }
    n=$(wc -c <"$f")
    g=$(gzip -9 -c "$f" | wc -c)
    x=$(xz -9e -c "$f" | wc -c)
    h=$(python3 -c '
import collections, math, sys
data = open(sys.argv[1], "rb").read()
n = len(data)
print(f"{-sum(c / n * math.log2(c / n) for c in collections.Counter(data).values()):.3f}")
' "$f")
    printf '| %s | %d | %s | %s | %s |\n' "${f#"$here"/}" "$n" "$(bpb "$g" "$n")" "$(bpb "$x" "$n")" "$h"
done

# A trained model has seen its training text; a compressor that has seen it too is the fairer
# yardstick for the held-out file: size(train + held-out) - size(train), both xz -9e.
if (($# == 4)); then
    echo
    echo "| held-out file | xz -9e after its train file |"
    echo "|---|---|"
    for pair in "$1 $2" "$3 $4"; do
        read -r tr ho <<<"$pair"
        alone=$(xz -9e -c "$tr" | wc -c)
        both=$(cat "$tr" "$ho" | xz -9e -c | wc -c)
        printf '| %s | %s |\n' "${ho#"$here"/}" "$(bpb $((both - alone)) "$(wc -c <"$ho")")"
    done
fi

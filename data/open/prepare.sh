#!/usr/bin/env bash
# Extract the King James Bible from the Debian packages bible-kjv-text (the text)
# and bible-kjv (the `bible` reader), one verse per line without its reference,
# and split it into a held-out slice of whole books and a training file.
#
# Held out: Ecclesiastes and the Song of Solomon (middle of the book), and the
# epistles 1 John, 2 John, 3 John and Jude (near the end). Everything else,
# Revelation included, is training text. Safe to run again: it rewrites both files.
set -euo pipefail

here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
train="$here/kjv-train.txt"
heldout="$here/kjv-heldout.txt"
# Book abbreviations as the `bible` reader prints them before "chapter:verse".
heldout_books='^(Eccl|SSol|1Jn|2Jn|3Jn|Jude)[0-9]+:[0-9]+ '

missing=()
for pkg in bible-kjv-text bible-kjv; do
    dpkg-query -W -f='${Status}' "$pkg" 2>/dev/null | grep -q 'install ok installed' || missing+=("$pkg")
done
if ((${#missing[@]})); then
    echo "installing ${missing[*]}"
    if [[ $(id -u) -eq 0 ]]; then
        apt-get install -y "${missing[@]}"
    else
        sudo apt-get install -y "${missing[@]}"
    fi
fi

raw="$(mktemp)"
trap 'rm -f "$raw"' EXIT
# Genesis 1:1 to Revelation 22:21 is the whole book; -f prints one verse per line as "Ge1:1 In the ...".
bible -f gen1:1-rev22:21 >"$raw"

verses=$(wc -l <"$raw")
if [[ $verses -ne 31102 ]]; then
    # The King James Bible has 31,102 verses; anything else means the reader's format changed.
    echo "prepare.sh: expected 31102 verses from bible, got $verses" >&2
    exit 1
fi
if grep -qvE '^[1-3]?[A-Za-z]+[0-9]+:[0-9]+ ' "$raw"; then
    echo "prepare.sh: a line of bible's output lacks the book chapter:verse prefix" >&2
    exit 1
fi

grep -E "$heldout_books" "$raw" | sed -E 's/^[^ ]+ //' >"$heldout"
grep -vE "$heldout_books" "$raw" | sed -E 's/^[^ ]+ //' >"$train"

for f in "$train" "$heldout"; do
    printf 'wrote %s: %d lines, %d bytes, sha256 %s\n' \
        "$(basename "$f")" "$(wc -l <"$f")" "$(wc -c <"$f")" "$(sha256sum "$f" | cut -d' ' -f1)"
done

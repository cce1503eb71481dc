#!/usr/bin/env bash
# Outside English for checking models: three kinds of text that no bundled model trains on
# (data/general/prepare.py keeps all three kinds out of the training corpus), each cut to
# about 35 KB at a line end. Rebuilt here from Debian packages, not committed.
#   quotations.txt  short quotations: the `fortunes` file of fortunes-min (BSD licence)
#   legal.txt       legal prose: /usr/share/common-licenses/GPL-3 (base-files)
#   faq.txt         a technical FAQ: the Python 3.11 FAQ sources of python3.11-doc (PSF-2.0)
# and quotations-baseline.txt, the other two collections of fortunes-min (`literature`,
# `riddles`): similar text whose word counts make the frequency baseline for quotations.txt.
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
bytes=35000

missing=()
for pkg in fortunes-min python3.11-doc; do
    dpkg-query -W -f='${Status}' "$pkg" 2>/dev/null | grep -q 'install ok installed' || missing+=("$pkg")
done
if ((${#missing[@]})); then
    echo "installing ${missing[*]}"
    if [[ $(id -u) -eq 0 ]]; then apt-get install -y "${missing[@]}"; else sudo apt-get install -y "${missing[@]}"; fi
fi

# The first $bytes bytes of standard input, cut back to the last whole line.
cut_lines() { head -c "$bytes" | sed '$d'; }

grep -v '^%$' /usr/share/games/fortunes/fortunes | cut_lines >"$here/quotations.txt"
cat /usr/share/games/fortunes/literature /usr/share/games/fortunes/riddles | grep -v '^%$' \
    >"$here/quotations-baseline.txt"
cut_lines </usr/share/common-licenses/GPL-3 >"$here/legal.txt"
cat /usr/share/doc/python3.11/html/_sources/faq/*.rst.txt | cut_lines >"$here/faq.txt"

for f in quotations quotations-baseline legal faq; do
    printf 'wrote %s.txt: %d bytes\n' "$f" "$(wc -c <"$here/$f.txt")"
done

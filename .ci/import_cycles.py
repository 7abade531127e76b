#!/usr/bin/env python3
# Import circles inside the model crate. Run from the workspace root (needs only Python 3):
#
#     python3 .ci/import_cycles.py
#
# Prints every strongly connected component of more than one file and exits 1 if there is
# one; prints the layer order it checks and exits 1 on an import against it. .ci/run calls it.
"""How the module graph is built (a heuristic, stated so that the result is reproducible):

- Nodes: one per .rs file under model/src. A folder module counts as one node per file: the
  file `solvers.rs` (its `mod` list and docs) is one node, `solvers/transient.rs` another,
  `solvers/transient/stepper.rs` a third.
- Edges: every path beginning `crate::` in code (use statements, brace groups expanded, and
  paths written inline), every path beginning `super::` or `self::`, and every path that
  begins with the name of a child module the file declares (`mod run;` then `run::Tally`).
  A path is resolved to the deepest file it names: `crate::solvers::rings::grid::RingGrid`
  is an edge to solvers/rings/grid.rs. `crate::Name` of a crate-root re-export resolves to the
  file that defines it; any other `crate::NAME` (MU0, MODEL_VERSION) to lib.rs.
- Not edges: `mod` declarations (a parent owning its child is not an import), the crate
  root's `pub use` re-exports (the facade for callers outside the crate), comments, string
  literals, and test-only code: `#[cfg(test)] mod name { ... }` blocks and files declared
  under `#[cfg(test)]` (tests may reach across layers to build their fixtures).
- Layers, lowest first: kernels, records, solvers, jobs. A file in one layer may import its
  own layer and the layers below it (and lib.rs); kernels import nothing else of the crate.
"""

import os
import re
import sys

SRC = os.path.join("model", "src")
LAYERS = ["kernels", "records", "solvers", "jobs"]


def strip_comments_and_strings(text):
    """Blanks out comments, string and char literals (keeping line structure)."""
    out = []
    i, n = 0, len(text)
    while i < n:
        c = text[i]
        if text.startswith("//", i):
            j = text.find("\n", i)
            i = n if j < 0 else j
        elif text.startswith("/*", i):
            j = text.find("*/", i + 2)
            i = n if j < 0 else j + 2
        elif c == "r" and re.match(r'r#*"', text[i:]) and (i == 0 or not (text[i - 1].isalnum() or text[i - 1] == "_")):
            m = re.match(r'r(#*)"', text[i:])
            end = '"' + m.group(1)
            j = text.find(end, i + len(m.group(0)))
            i = n if j < 0 else j + len(end)
            out.append('""')
        elif c == '"':
            j = i + 1
            while j < n and text[j] != '"':
                j += 2 if text[j] == "\\" else 1
            i = j + 1
            out.append('""')
        elif c == "'" and re.match(r"'(\\.|[^\\'])'", text[i:]):
            i += len(re.match(r"'(\\.|[^\\'])'", text[i:]).group(0))
            out.append("' '")
        else:
            out.append(c)
            i += 1
    return "".join(out)


def strip_test_blocks(code):
    """Removes `#[cfg(test)] mod name { ... }` blocks; returns code and test-only file mods."""
    test_mods = set(re.findall(r"#\[cfg\(test\)\]\s*(?:pub(?:\([^)]*\))?\s+)?mod\s+(\w+)\s*;", code))
    while True:
        m = re.search(r"#\[cfg\(test\)\]\s*(?:pub(?:\([^)]*\))?\s+)?mod\s+\w+\s*\{", code)
        if not m:
            return code, test_mods
        depth, j = 1, m.end()
        while j < len(code) and depth:
            depth += {"{": 1, "}": -1}.get(code[j], 0)
            j += 1
        code = code[: m.start()] + code[j:]


def expand_use(tree):
    """Expands a use tree `a::{b, c::{d, self}}` into the list of plain paths."""
    tree = re.sub(r"\s+", "", tree)
    m = re.search(r"\{", tree)
    if not m:
        return [re.sub(r"as\w+$", "", tree)] if tree else []
    prefix = tree[: m.start()]
    depth, j = 1, m.end()
    while j < len(tree) and depth:
        depth += {"{": 1, "}": -1}.get(tree[j], 0)
        j += 1
    inner = tree[m.end() : j - 1]
    parts, depth, start = [], 0, 0
    for k, ch in enumerate(inner):
        if ch == "{":
            depth += 1
        elif ch == "}":
            depth -= 1
        elif ch == "," and depth == 0:
            parts.append(inner[start:k])
            start = k + 1
    parts.append(inner[start:])
    paths = []
    for part in parts:
        if not part:
            continue
        for sub in expand_use(part):
            paths.append(prefix[:-2] if sub == "self" else prefix + sub)
    return paths


def module_files():
    """Maps module path tuples (() for lib.rs) to file paths."""
    mods = {}
    for root, _, files in os.walk(SRC):
        for f in files:
            if not f.endswith(".rs"):
                continue
            rel = os.path.relpath(os.path.join(root, f), SRC)[:-3].split(os.sep)
            if rel == ["lib"]:
                mods[()] = os.path.join(root, f)
            elif rel[-1] == "mod":
                mods[tuple(rel[:-1])] = os.path.join(root, f)
            else:
                mods[tuple(rel)] = os.path.join(root, f)
    return mods


def resolve(segments, mods, reexports):
    """The deepest module file a crate-absolute path names."""
    best = ()
    for k in range(1, len(segments) + 1):
        if tuple(segments[:k]) in mods:
            best = tuple(segments[:k])
        else:
            break
    if best == () and segments and segments[0] in reexports:
        return reexports[segments[0]]
    return best


def main():
    mods = module_files()
    lib_code = strip_comments_and_strings(open(mods[()], encoding="utf-8").read())
    reexports = {}
    for tree in re.findall(r"\bpub\s+use\s+([^;]+);", lib_code):
        for path in expand_use(tree):
            segs = path.split("::")
            target = resolve(segs[:-1], mods, {})
            if target:
                reexports[segs[-1]] = target

    test_only = set()
    codes = {}
    for mod, path in mods.items():
        code, test_mods = strip_test_blocks(strip_comments_and_strings(open(path, encoding="utf-8").read()))
        codes[mod] = code
        test_only |= {mod + (t,) for t in test_mods}
    # Children of test-only files are test-only too.
    test_only |= {m for m in mods if any(m[: len(t)] == t for t in test_only)}

    edges = {m: set() for m in mods if m not in test_only}
    for mod in edges:
        code = codes[mod]
        children = set(re.findall(r"\bmod\s+(\w+)\s*;", code))
        paths = []
        for tree in re.findall(r"\buse\s+([^;]+);", code):
            paths += expand_use(tree)
        paths += re.findall(r"(?<![\w:])((?:crate|super|self)(?:::\w+)+)", code)
        if children:
            paths += re.findall(r"(?<![\w:])((?:%s)(?:::\w+)+)" % "|".join(children), code)
        is_lib = mod == ()
        for p in paths:
            segs = p.split("::")
            if segs[0] == "crate":
                absolute = segs[1:]
            elif segs[0] in ("super", "self"):
                base = list(mod)
                while segs and segs[0] in ("super", "self"):
                    if segs[0] == "super":
                        base = base[:-1]
                    segs = segs[1:]
                absolute = base + segs
            elif segs[0] in children:
                if is_lib:
                    continue  # the root's re-exports are the outside facade
                absolute = list(mod) + segs
            else:
                continue
            target = resolve(absolute, mods, reexports)
            if target != mod and target in edges:
                edges[mod].add(target)

    # Tarjan's strongly connected components (iterative).
    index, low, on_stack, stack, comps, counter = {}, {}, set(), [], [], [0]
    for start in sorted(edges):
        if start in index:
            continue
        work = [(start, iter(sorted(edges[start])))]
        index[start] = low[start] = counter[0]
        counter[0] += 1
        stack.append(start)
        on_stack.add(start)
        while work:
            node, it = work[-1]
            nxt = next(it, None)
            if nxt is not None:
                if nxt not in index:
                    index[nxt] = low[nxt] = counter[0]
                    counter[0] += 1
                    stack.append(nxt)
                    on_stack.add(nxt)
                    work.append((nxt, iter(sorted(edges[nxt]))))
                elif nxt in on_stack:
                    low[node] = min(low[node], index[nxt])
            else:
                work.pop()
                if work:
                    low[work[-1][0]] = min(low[work[-1][0]], low[node])
                if low[node] == index[node]:
                    comp = []
                    while True:
                        w = stack.pop()
                        on_stack.discard(w)
                        comp.append(w)
                        if w == node:
                            break
                    comps.append(comp)

    def name(m):
        return os.path.relpath(mods[m], SRC)

    bad = 0
    circles = [c for c in comps if len(c) > 1]
    print(f"model/src: {len(edges)} files, {sum(len(e) for e in edges.values())} import edges")
    for comp in circles:
        members = sorted(comp)
        print("import circle: " + ", ".join(name(m) for m in members))
        for m in members:
            inside = sorted(t for t in edges[m] if t in comp)
            print(f"    {name(m)} -> " + ", ".join(name(t) for t in inside))
        bad += 1

    rank = {layer: k for k, layer in enumerate(LAYERS)}
    for m in sorted(edges):
        if not m or m[0] not in rank:
            continue
        for t in sorted(edges[m]):
            if not t:
                continue  # lib.rs: MU0 and the version string
            if t[0] in rank and rank[t[0]] > rank[m[0]]:
                print(f"layer violation: {name(m)} ({m[0]}) imports {name(t)} ({t[0]})")
                bad += 1
            elif m[0] == "kernels" and t[0] != "kernels":
                print(f"layer violation: kernel {name(m)} imports {name(t)}")
                bad += 1

    print(f"layers, lowest first: {', '.join(LAYERS)}")
    print(f"import circles: {len(circles)}; layer violations: {bad - len(circles)}")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())

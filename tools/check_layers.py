#!/usr/bin/env python3
"""The dependency rule of the layers (DEVELOPERS.md, "Layers"): a file of a layer includes only
headers of its own layer and of the layers below it. Scans include/firmcall/<layer>/ and
src/<layer>/; prints each include that breaks the rule as FILE:LINE and exits 1 when there is one.

    python3 tools/check_layers.py [ROOT]
"""
import pathlib
import re
import sys

# Lowest first. A layer may include the layers listed before it, except that peers (same rank)
# may not include each other.
RANKS = {
    "util": 0,
    "model": 1,
    "estimate": 2,
    "portfolio": 2,
    "book": 3,
    "cluster": 3,
    "io": 4,
    "format": 5,
    "engine": 6,
    "monitor": 7,
    "report": 8,
    "app": 9,
}
INCLUDE = re.compile(r'^\s*#\s*include\s*"(?:firmcall/)?([a-z_]+)/[^"]+"')


def layer_of(path, root):
    rel = path.relative_to(root).parts
    if rel[0] == "include" and len(rel) > 3:
        return rel[2]
    if rel[0] == "src" and len(rel) > 2:
        return rel[1]
    return None


def main():
    root = pathlib.Path(sys.argv[1] if len(sys.argv) > 1 else pathlib.Path(__file__).resolve().parent.parent)
    files = sorted(list((root / "include" / "firmcall").rglob("*.hpp")) + list((root / "src").rglob("*.[ch]pp")))
    broken, checked = [], 0
    for f in files:
        own = layer_of(f, root)
        if own is None:
            if f.parent != root / "include" / "firmcall":  # the umbrella header may include all
                broken.append(f"{f.relative_to(root)}: not inside a layer folder")
            continue
        if own not in RANKS:
            broken.append(f"{f.relative_to(root)}: unknown layer '{own}' (add it to tools/check_layers.py)")
            continue
        for n, line in enumerate(f.read_text(encoding="utf-8").splitlines(), 1):
            m = INCLUDE.match(line)
            if not m or m.group(1) not in RANKS:
                continue
            checked += 1
            other = m.group(1)
            if other == own:
                continue
            if RANKS[other] >= RANKS[own]:
                kind = "a peer layer" if RANKS[other] == RANKS[own] else "a higher layer"
                broken.append(f"{f.relative_to(root)}:{n}: layer '{own}' includes {kind} '{other}': {line.strip()}")
    for b in broken:
        print(b)
    print(f"layer check: {len(files)} files, {checked} includes of layers, {len(broken)} broken")
    return 1 if broken else 0


if __name__ == "__main__":
    sys.exit(main())

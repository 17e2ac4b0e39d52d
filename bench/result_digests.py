"""A guard for work that must not change any figure: the hash of every entry's result.

    python bench/result_digests.py save FILE FOLDER [FOLDER ...]
    python bench/result_digests.py compare FILE FOLDER [FOLDER ...]

``save`` computes every entry of the folders (each read as a notebook, nothing written) and
writes one line per entry: its path and the sha256 of its result's sidecar text. ``compare``
computes them again and lists the entries whose result changed (exit 1 if any). Run ``save``
before a change meant to be a pure speed-up or a refactoring (of the text reader, say) and
``compare`` after it, on the real corpus's entries, the example notebook and a generated one
(``bench/scale.py``'s generator). The names extra is blocked, as in a default install.
"""

from __future__ import annotations

import argparse
import hashlib
import os
import sys
from pathlib import Path


def digests(folders: list[Path]) -> dict[str, str]:
    """Entry path → sha256 of its result's sidecar text."""
    from capture.notebook import Notebook
    from capture.run import compute, read_entry
    from capture.safeio import read_bounded

    out = {}
    for folder in folders:
        nb = Notebook.open(folder)
        for f in nb.entry_files():
            result = compute(nb, read_entry(nb, f, read_bounded(f, 2**24), nb.relpath(f)))
            out[str(f)] = hashlib.sha256(result.sidecar_json().encode()).hexdigest()
    return out


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("action", choices=("save", "compare"))
    ap.add_argument("file", type=Path)
    ap.add_argument("folders", type=Path, nargs="+")
    args = ap.parse_args()
    os.environ.setdefault("MASSTRAIL_BLOCK", "names")
    now = digests(args.folders)
    if args.action == "save":
        args.file.write_text("".join(f"{k} {v}\n" for k, v in sorted(now.items())))
        print(f"{len(now)} results saved to {args.file}")
        return
    before = dict(line.split(" ", 1) for line in args.file.read_text().split("\n") if line)
    changed = sorted(k for k in before.keys() | now.keys() if before.get(k) != now.get(k))
    for k in changed:
        print(f"changed: {k}")
    print(f"{len(now)} results, {len(changed)} changed")
    sys.exit(1 if changed else 0)


if __name__ == "__main__":
    main()

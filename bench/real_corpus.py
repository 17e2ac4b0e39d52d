"""Benchmark: masstrail on the 500 real procedures of the shared corpus, scored.

    python bench/real_corpus.py [--corpus ../shared/real-corpus] [--names both|on|off]

Copies the corpus's entries to a temporary folder, runs the installed ``masstrail scan
--recompute`` on them (a real process, as a user runs it), and runs the corpus's own scorer
(``score.py``) on what it wrote. ``--names off`` blocks the optional ``chemicals`` name
database (``MASSTRAIL_BLOCK=names``), as a default install without the ``names`` extra;
``both`` (the default) runs both ways. Also printed: the time of the scan, and how the
quantities of the text were classed (inputs, product, set aside, unread).
"""

from __future__ import annotations

import argparse
import collections
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def run(corpus: Path, names: bool) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        entries = Path(tmp) / "entries"
        shutil.copytree(corpus / "entries", entries)
        env = dict(os.environ)
        env["MASSTRAIL_BLOCK"] = ",".join(filter(None, [env.get("MASSTRAIL_BLOCK", ""),
                                                         "" if names else "names"]))  # fmt: skip
        start = time.perf_counter()
        subprocess.run([sys.executable, "-c", "from capture.cli import main; main()", "scan",
                        "--recompute", str(entries)], env=env, check=True,
                       stdout=subprocess.DEVNULL)  # fmt: skip
        took = time.perf_counter() - start
        label = "with" if names else "without"
        print(f"== {label} the chemicals name database: scan {took:.1f} s")
        details = Path(tmp) / "details.json"
        score = [sys.executable, str(corpus / "score.py"), str(entries), "--json", str(details)]
        out = subprocess.run(score, capture_output=True, text=True, check=True).stdout
        print(out.rstrip())
        roles: collections.Counter[str] = collections.Counter()
        cover: collections.Counter[str] = collections.Counter()
        for side in entries.glob("*.waste.json"):
            result = json.loads(side.read_text(encoding="utf-8"))
            for m in result["materials"]:
                cover["materials"] += 1
                cover["with a formula"] += bool(m["formula"])
                if any(a["kind"] == "volume" for a in m["amounts"]):
                    cover["volumes"] += 1
                    cover["volumes weighed"] += m["mass_g"] is not None
            roles["input"] += sum(len(m["amounts"]) for m in result["materials"]
                                  if m["origin"] == "text")  # fmt: skip
            for m in result.get("set_aside", []):
                roles[m["role"]] += max(1, len(m["amounts"]))
        print("quantities of the text: " + ", ".join(f"{k} {v}" for k, v in roles.most_common()))
        print(
            f"coverage: volumes weighed {cover['volumes weighed']}/{cover['volumes']} "
            f"({cover['volumes weighed'] / cover['volumes']:.1%}); materials with a formula "
            f"{cover['with a formula']}/{cover['materials']} "
            f"({cover['with a formula'] / cover['materials']:.1%})"
        )


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--corpus", type=Path, default=ROOT.parent / "shared" / "real-corpus")
    ap.add_argument("--names", choices=["both", "on", "off"], default="both")
    args = ap.parse_args()
    if not (args.corpus / "score.py").exists():
        sys.exit(f"no corpus at {args.corpus} (give --corpus)")
    for names in {"both": (True, False), "on": (True,), "off": (False,)}[args.names]:
        run(args.corpus, names)


if __name__ == "__main__":
    main()

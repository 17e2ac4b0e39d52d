"""Benchmark: the compound table's size, load time and lookup time, and the start-up of
``masstrail --help``, each beside a floor measured in the same run.

    python bench/compounds.py [--rounds 15] [--before PYTHON]

- size: the table file, its compounds, names and densities;
- load: a fresh process that imports the resolver and looks up one name, against the same
  process without the lookup (the floor: interpreter start and imports); the difference is
  the cost of opening the table, paid once per process;
- lookup: names a procedure uses (hits, abbreviations, formulas, misses), each asked once in
  a warm process, against the floor of the curated data's lookup alone (what masstrail did
  before it had the table);
- ``masstrail --help``: a fresh process, against ``python -c pass``. With ``--before PYTHON``
  (the interpreter of an environment with an older masstrail), that one is timed too.

Medians of ``--rounds`` runs, interleaved so that the machine's drift falls on all of them.
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
NAMES = [
    "toluene", "phenylacetylene", "pivaloyl chloride", "3-bromopyridine", "DIPEA", "NMP",
    "Pd2dba3", "NaNO2", "KHCO3", "ethyl iodide", "2,4-dichloropyridine", "tert-butyl "
    "4-(4-bromophenyl)piperazine-1-carboxylate", "palladium (II) acetate", "hydrazine hydrate",
    "sodium tert-butoxide", "isohexane", "HATU", "4-methoxyphenethyl alcohol", "not a compound",
    "CC(=O)Nc1ccc(O)cc1",
]  # fmt: skip


def _run(cmd: list[str]) -> float:
    start = time.perf_counter()
    subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    return time.perf_counter() - start


def _ms(x: float) -> str:
    return f"{1000 * x:.1f} ms"


def size() -> None:
    from masstrail_plugins.resolve import compounds

    facts = compounds.table_facts()
    mb = compounds.TABLE.stat().st_size / 1e6
    print(f"table: {mb:.2f} MB, {facts['compounds']} compounds, {facts['names']} names, "
          f"{facts['liquids with a density']} liquid densities ({facts['estimated densities']} "
          f"estimated), {facts['formulas']} formulas that name one compound")  # fmt: skip


def load(rounds: int) -> None:
    py = sys.executable
    floor_cmd = [py, "-c", "import masstrail_plugins.resolve.materials"]
    cmd = [py, "-c", "import masstrail_plugins.resolve.materials as m; from capture.config "
           "import LabConfig; m.resolve_builtin('phenylacetylene', LabConfig())"]  # fmt: skip
    floor, took = [], []
    for _ in range(rounds):
        floor.append(_run(floor_cmd))
        took.append(_run(cmd))
    f, t = statistics.median(floor), statistics.median(took)
    print(f"load: first lookup in a fresh process {_ms(t)}, floor (same imports, no lookup) "
          f"{_ms(f)}: opening the table costs {_ms(t - f)} once per process "
          f"({t / f:.2f}× the floor)")  # fmt: skip


def lookup(rounds: int) -> None:
    from capture.chem import material_key
    from capture.config import LabConfig
    from masstrail_plugins.resolve import compounds
    from masstrail_plugins.resolve.knowledge import builtin_data
    from masstrail_plugins.resolve.materials import resolve_builtin

    config = LabConfig()
    resolve_builtin("toluene", config)  # the table is open
    index = builtin_data().index
    per_name, floor = [], []
    for r in range(rounds):
        names = [n + " " * (1 + 2 * r) for n in NAMES]  # new strings: past the caches
        compounds._row.cache_clear()
        compounds._row_of_formula.cache_clear()
        start = time.perf_counter()
        for n in names:
            index.get(material_key(n))  # floor: the curated data's lookup
        floor.append((time.perf_counter() - start) / len(names))
        names = [n + " " for n in names]  # new strings again for the full lookup
        start = time.perf_counter()
        for n in names:
            resolve_builtin(n, config)
        per_name.append((time.perf_counter() - start) / len(names))
    t, f = statistics.median(per_name), statistics.median(floor)
    print(f"lookup: {1e6 * t:.0f} µs a name (curated, table, formula, SMILES in turn; uncached), "
          f"floor (the curated data's lookup alone) {1e6 * f:.1f} µs: "
          f"{t / f:.1f}× the floor")  # fmt: skip


def startup(rounds: int, before: str | None) -> None:
    py = sys.executable
    cli = "from capture.cli import main; main()"
    cmds = {"python -c pass (floor)": [py, "-c", "pass"],
            "masstrail --help": [py, "-c", cli, "--help"]}  # fmt: skip
    if before:
        cmds["masstrail --help, before"] = [before, "-c", cli, "--help"]
    times: dict[str, list[float]] = {k: [] for k in cmds}
    for _ in range(rounds):
        for k, c in cmds.items():
            times[k].append(_run(c))
    floor = statistics.median(times["python -c pass (floor)"])
    for k, v in times.items():
        print(f"{k}: {_ms(statistics.median(v))} ({statistics.median(v) / floor:.2f}× the floor)")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--rounds", type=int, default=15)
    ap.add_argument("--before", help="the python of an environment with an older masstrail")
    args = ap.parse_args()
    size()
    load(args.rounds)
    lookup(args.rounds)
    startup(args.rounds, args.before)


if __name__ == "__main__":
    main()

"""Benchmark: the real corpus's ORD records imported with their structured amounts, scanned,
and their PMIs compared with the corpus's reference.

    python bench/ord_corpus.py [--corpus ../shared/real-corpus] [--keep FOLDER]

The 500 records of ``reactions.json`` (ORD JSON, trimmed) are turned into one ORD
``Dataset`` (binary, gzip), imported by the installed ``masstrail import`` (a real
process) and scanned with the chemicals name database blocked (a default install). For each
reaction where masstrail weighed every material and both sides have a PMI, the PMI is
compared with ``reference.json``'s (computed from the same structured fields; its limits
are in the corpus README: it weighs solutions at 1 g/mL). Printed: how many agree within
2 %, and the rest by size of the difference.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def dataset_file(records: list[dict], out: Path) -> None:
    """One ORD Dataset of the corpus's records, written to ``out``."""
    from google.protobuf import json_format
    from ord_schema import message_helpers
    from ord_schema.proto import dataset_pb2, reaction_pb2

    ds = dataset_pb2.Dataset(name="real corpus", description="ORD records of the real corpus")
    for rec in records:
        rx = json_format.ParseDict(rec["reaction"], reaction_pb2.Reaction(),
                                   ignore_unknown_fields=True)  # fmt: skip
        rx.reaction_id = rec["reaction_id"]
        rx.notes.procedure_details = rec.get("procedure") or ""
        ds.reactions.append(rx)
    message_helpers.save_message(ds, out)


def compare(folder: Path, reference: list[dict]) -> dict:
    by_id = {r["reaction_id"]: r for r in reference}
    out = {"compared": 0, "within 2%": 0, "2-10%": 0, "over 10%": 0, "not all weighed": 0,
           "no PMI": 0, "reference incomplete": 0}  # fmt: skip
    for side in folder.glob("*.waste.json"):
        d = json.loads(side.read_text(encoding="utf-8"))
        ref = by_id.get(d["entry"]["id"])
        if ref is None:
            continue
        if any(m["mass_g"] is None for m in d["materials"]):
            out["not all weighed"] += 1
            continue
        if not ref.get("complete_wu"):  # the reference could not weigh a component either
            out["reference incomplete"] += 1
            continue
        ours, theirs = d["metrics"]["pmi"], ref.get("pmi_wu")  # both with the workups
        if not ours or not theirs:
            out["no PMI"] += 1
            continue
        out["compared"] += 1
        diff = abs(ours / theirs - 1)
        out["within 2%" if diff <= 0.02 else "2-10%" if diff <= 0.10 else "over 10%"] += 1
    return out


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--corpus", type=Path, default=ROOT.parent / "shared" / "real-corpus")
    ap.add_argument("--keep", type=Path, help="import into this folder and keep it")
    args = ap.parse_args()
    records = json.loads((args.corpus / "reactions.json").read_text())["reactions"]
    reference = json.loads((args.corpus / "reference.json").read_text())
    with tempfile.TemporaryDirectory() as tmp:
        data = Path(tmp) / "corpus.pb.gz"
        dataset_file(records, data)
        folder = args.keep or Path(tmp) / "imported"
        env = {**os.environ, "MASSTRAIL_BLOCK": "names"}
        subprocess.run([sys.executable, "-c", "from capture.cli import main; main()", "import",
                        str(data), "--to", str(folder)], env=env, check=True,
                       stdout=subprocess.DEVNULL)  # fmt: skip
        got = compare(folder, reference)
    n = got["compared"]
    print(f"{len(records)} records imported; {n} with every material weighed and a PMI on both "
          f"sides: {got['within 2%']} ({got['within 2%'] / max(n, 1):.1%}) within 2 % of the "
          f"reference, {got['2-10%']} within 2-10 %, {got['over 10%']} beyond; "
          f"{got['not all weighed']} with a material masstrail did not weigh, "
          f"{got['reference incomplete']} the reference could not weigh, {got['no PMI']} "
          "without a PMI on one side")  # fmt: skip


if __name__ == "__main__":
    main()

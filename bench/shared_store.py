"""Benchmark: a department's notebooks scanned into one shared PostgreSQL store, beside the
SQLite path measured in the same run.

    python bench/shared_store.py [--notebooks 10] [--entries 10000] [--jobs 0] [--out FILE.md]
    python bench/shared_store.py --smoke     # 2 notebooks of 40 entries: that it runs

A throw-away PostgreSQL server is started on this machine (tests/pgserver.py: initdb and
pg_ctl from the system packages, fsync left on as a real server has it). One notebook of N
generated entries (bench/scale.py's generator) is copied K times. Measured, each a whole
process's wall time, as a user runs it:

- the SQLite path: ``masstrail scan`` of one copy with no shared store (the floor);
- the same scan of another copy with ``MASSTRAIL_STORE_URL`` set: sidecars, local store,
  the queue and its sending; the ratio to the floor is the issue's "a single lab's scan at
  most 1.5 × slower";
- the other copies scanned two at a time (two labs at once, on 2 cores), into the same
  server: entries per second, beside the SQLite path's;
- the shared store's size (history and all) and its history rows;
- ``masstrail gaps --store URL --json`` and ``masstrail report --store URL`` over all
  K × N entries, with their peak memory.
"""

from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "tests"))
sys.path.insert(0, str(ROOT / "bench"))


def _run(args: list[str], env: dict | None = None) -> tuple[float, float]:
    """(wall seconds, peak RSS in MB) of a process run to its end."""
    t = time.perf_counter()
    with tempfile.TemporaryFile("w+") as err:
        proc = subprocess.Popen(args, stdout=subprocess.DEVNULL, stderr=err, env=env)
        _pid, status, usage = os.wait4(proc.pid, 0)
        code = os.waitstatus_to_exitcode(status)
        err.seek(0)
        if code not in (0, 1):  # 1: gaps found blocking gaps, as it should
            raise SystemExit(f"{' '.join(args)} failed ({code}):\n{err.read()[-2000:]}")
    return time.perf_counter() - t, usage.ru_maxrss / 1024


def _masstrail() -> list[str]:
    exe = Path(sys.executable).with_name("masstrail")
    return [str(exe)] if exe.exists() else [sys.executable, "-m", "capture.cli"]


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--notebooks", type=int, default=10)
    ap.add_argument("--entries", type=int, default=10000)
    ap.add_argument("--jobs", type=int, default=0)
    ap.add_argument("--smoke", action="store_true")
    ap.add_argument("--out", type=Path)
    args = ap.parse_args()
    if args.smoke:
        args.notebooks, args.entries = 2, 40
    from pgserver import Server
    from scale import generate

    m = _masstrail()
    jobs = ["--jobs", str(args.jobs)]
    server = Server(fsync=True)
    tmp = Path(tempfile.mkdtemp(prefix="masstrail-shared-bench-"))
    try:
        url = server.database("department")
        subprocess.run([*m, "store", "init", url], check=True, stdout=subprocess.DEVNULL)
        seed = tmp / "seed"
        seed.mkdir()
        generate(seed, args.entries)
        copies = [tmp / f"lab-{k:02d}" for k in range(args.notebooks + 1)]
        for c in copies:
            shutil.copytree(seed, c, ignore=shutil.ignore_patterns(".masstrail", "*.waste.*"))
        plain = {k: v for k, v in os.environ.items() if k != "MASSTRAIL_STORE_URL"}
        shared_env = {**plain, "MASSTRAIL_STORE_URL": url}
        sqlite_s, sqlite_mb = _run([*m, "scan", str(copies[0]), *jobs], plain)
        shared_s, shared_mb = _run([*m, "scan", str(copies[1]), *jobs], shared_env)
        rest = copies[2:]
        t = time.perf_counter()
        for a, b in zip(rest[::2], rest[1::2] + [None] * (len(rest) % 2), strict=True):
            procs = [subprocess.Popen([*m, "scan", str(c), *jobs], env=shared_env,
                                      stdout=subprocess.DEVNULL) for c in (a, b) if c]  # fmt: skip
            for p in procs:
                if p.wait() != 0:
                    raise SystemExit("a scan into the shared store failed")
        pair_s = time.perf_counter() - t
        import psycopg

        with psycopg.connect(url) as conn:
            entries, history = conn.execute(
                "SELECT (SELECT COUNT(*) FROM entries), (SELECT COUNT(*) FROM history)"
            ).fetchone()
            db_mb = conn.execute("SELECT pg_database_size(current_database())").fetchone()[0] / 1e6
            hist_mb = conn.execute("SELECT pg_total_relation_size('history')").fetchone()[0] / 1e6
        waiting = sum(
            __import__("sqlite3").connect(c / ".masstrail" / "records.db")
            .execute("SELECT COUNT(*) FROM outbox").fetchone()[0] for c in copies[1:]
        )  # fmt: skip
        gaps_s, gaps_mb = _run([*m, "gaps", "--store", url, "--json"], plain)
        report_s, report_mb = _run([*m, "report", "--store", url, "-o", str(tmp / "r.html")],
                                   plain)  # fmt: skip
    finally:
        server.remove()
        shutil.rmtree(tmp, ignore_errors=True)
    n, k = args.entries, args.notebooks
    lines = [
        f"# Shared store: {k} notebooks × {n:,} entries, jobs {args.jobs or 'auto'}",
        "",
        "| figure | value |",
        "|---|---|",
        f"| one lab's cold scan, SQLite only (floor) | {sqlite_s:.1f} s ({n / sqlite_s:,.0f} "
        f"entries/s), {sqlite_mb:.0f} MB |",
        f"| the same with the shared store | {shared_s:.1f} s ({n / shared_s:,.0f} entries/s), "
        f"{shared_mb:.0f} MB: **{shared_s / sqlite_s:.2f} ×** the floor |",
        f"| {len(rest)} more labs, two at a time, into the same server | {pair_s:.1f} s: "
        f"{len(rest) * n / pair_s:,.0f} entries/s ({len(rest) * n / pair_s / (n / sqlite_s):.2f}"
        " × one SQLite scan's rate) |",
        f"| shared store | {entries:,} current entries, {history:,} history rows; database "
        f"{db_mb:,.0f} MB, of which history {hist_mb:,.0f} MB "
        f"({hist_mb * 1e3 / max(history, 1):.1f} KB a row); {waiting} left waiting |",
        f"| `gaps --store` over {entries:,} entries | {gaps_s:.1f} s, {gaps_mb:.0f} MB |",
        f"| `report --store` over {entries:,} entries | {report_s:.1f} s, {report_mb:.0f} MB |",
    ]  # fmt: skip
    text = "\n".join(lines) + "\n"
    print(text)
    if args.out:
        args.out.write_text(text, encoding="utf-8")
    if entries != k * n or history != entries or waiting:
        print(f"MISMATCH: expected {k * n} entries and history rows, none waiting")
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())

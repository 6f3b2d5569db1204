"""Slice benchmark: ``kgkit slice`` against the floor of decompressing and splitting lines.

On a gzip-compressed synthetic dump (bench/synth.py) where most predicates are outside the
profile, measures in fresh subprocesses, in one run:

- floor: open the file through kgkit's reader (gzip), read 1 MB blocks, split them into
  lines, nothing else: no slicer can be faster than this on one core;
- ``kgkit slice --scope profile --literal-languages en,de`` with ``--jobs 1`` and ``--jobs 2``.

Prints the throughput of each and the ratios, then an extrapolation (not a measurement) of
the wall time to slice a 10-billion-statement dump: on one 2-core machine at the measured
``--jobs 2`` rate, and on a cluster of N executors of 4 cores each at the measured per-core
rate (``--jobs 1``), assuming the input is split evenly and nothing else limits (no Spark
path is built; the estimate only says what such a path would have to beat).

    python bench/slice_bench.py                  # about 2M statements
    python bench/slice_bench.py --scale 0.1      # a quick smoke run

Writes bench/out/slice_bench.json (bench/out is git-ignored).
"""

from __future__ import annotations

import argparse
import gzip
import json
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
OUT = HERE / "out"
sys.path.insert(0, str(ROOT))

from bench.synth import entities_for_triples, write_synthetic_dump  # noqa: E402

TEN_BILLION = 10_000_000_000


def _worker(mode: str, dump: str, where: str) -> None:
    if mode == "floor":
        from kgkit.ingest.lines import iter_byte_chunks
        from kgkit.ingest.sources import open_source

        t0 = time.perf_counter()  # after the imports, as for the slice runs
        src = open_source(dump)
        n = 0
        for _first, data in iter_byte_chunks(src.stream, 1 << 20):
            n += len(data.split(b"\n")) - 1
        src.close()
        out = {"lines": n}
    else:
        from kgkit.ingest import make_slice
        from kgkit.ingest.slice_dump import slice_dump
        from kgkit.workspace import init_workspace

        ws = init_workspace(where)
        sl = make_slice(ws, scope="profile", literal_languages=["en", "de"])
        t0 = time.perf_counter()
        engine, jobs = mode.split("=")
        s = slice_dump(
            ws,
            [dump],
            Path(where) / "out.nt",
            sl,
            jobs=int(jobs),
            engine="spark" if engine == "spark" else "local",
        )
        out = s.to_dict()
    out["seconds"] = time.perf_counter() - t0
    print(json.dumps(out), flush=True)


def _measure(mode: str, dump: Path) -> dict:
    where = tempfile.mkdtemp(prefix="kgkit-slice-bench-", dir=OUT)
    cmd = [sys.executable, __file__, "--worker", mode, str(dump), os.path.join(where, "ws")]
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, text=True, cwd=ROOT)
    stdout = proc.stdout.read()
    _, status, usage = os.wait4(proc.pid, 0)
    shutil.rmtree(where, ignore_errors=True)
    if os.waitstatus_to_exitcode(status) != 0:
        raise SystemExit(f"{mode} failed")
    res = json.loads(stdout.strip().splitlines()[-1])
    res["peak_rss_mb"] = usage.ru_maxrss / 1024
    return res


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--scale", type=float, default=1.0)
    ap.add_argument(
        "--spark",
        action="store_true",
        help="also --engine spark in local mode, 2 cores (needs the spark extra and Java)",
    )
    ap.add_argument("--rounds", type=int, default=3, help="alternating rounds (medians)")
    ap.add_argument("--worker", nargs=3, help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.worker:
        _worker(*args.worker)
        return 0
    OUT.mkdir(exist_ok=True)
    triples = int(2_000_000 * args.scale)
    plain = OUT / f"slice-{triples}.nt"
    dump = OUT / f"slice-{triples}.nt.gz"
    if not dump.is_file():
        counts = write_synthetic_dump(
            plain, entities=entities_for_triples(triples, 0.85), seed=11, other_ratio=0.85
        )
        with open(plain, "rb") as src, gzip.open(dump, "wb", compresslevel=6) as dst:
            shutil.copyfileobj(src, dst, 1 << 20)
        plain.unlink()  # kept only for --spark
        (OUT / f"slice-{triples}.json").write_text(json.dumps(counts))
    counts = json.loads((OUT / f"slice-{triples}.json").read_text())
    n = counts["triples"]
    if args.spark and not plain.is_file():
        # Hadoop cannot split a gzip file: Spark gets the same dump uncompressed
        with gzip.open(dump, "rb") as src, open(plain, "wb") as dst:
            shutil.copyfileobj(src, dst, 1 << 20)
    modes = ("floor", "jobs=1", "jobs=2", *(("spark=2",) if args.spark else ()))
    runs: dict[str, list[dict]] = {m: [] for m in modes}
    loads = []
    for rnd in range(args.rounds):
        loads.append(os.getloadavg()[0])
        for mode in modes:
            r = _measure(mode, plain if mode.startswith("spark") else dump)
            r["throughput"] = n / r["seconds"]
            runs[mode].append(r)
            print(
                f"  round {rnd + 1} {mode:<7} {r['seconds']:7.2f} s "
                f"{r['throughput']:>10,.0f} statements/s  (load {os.getloadavg()[0]:.1f})",
                file=sys.stderr,
            )
    rows = {}
    for mode in modes:
        rs = sorted(runs[mode], key=lambda r: r["seconds"])
        r = dict(rs[len(rs) // 2])
        r["vs_floor"] = statistics.median(
            fl["seconds"] / x["seconds"] for fl, x in zip(runs["floor"], runs[mode], strict=True)
        )
        rows[mode] = r
    load = statistics.median(loads)
    per_core = rows["jobs=1"]["throughput"]
    two_core = rows["jobs=2"]["throughput"]
    print()
    print(
        f"dump: {n:,} statements, {dump.stat().st_size / 1e6:,.0f} MB gzip; "
        f"load average {load:.1f} (median of the rounds' starts)"
    )
    print()
    print(f"{args.rounds} alternating rounds; medians; ratios paired within each round")
    print("| run | seconds | statements/s | vs floor |")
    print("|---|---:|---:|---:|")
    for mode, r in rows.items():
        name = {
            "floor": "decompress + split lines",
            "jobs=1": "kgkit slice --jobs 1",
            "jobs=2": "kgkit slice --jobs 2",
            "spark=2": "kgkit slice --engine spark, local[2], uncompressed (with session start)",
        }[mode]
        vs = r["vs_floor"]
        print(f"| {name} | {r['seconds']:.2f} | {r['throughput']:,.0f} | {vs:.2f} |")
    print()
    print("| 10 billion statements (extrapolated) | hours |")
    print("|---|---:|")
    print(f"| one 2-core machine, --jobs 2 | {TEN_BILLION / two_core / 3600:,.1f} |")
    for executors in (10, 50, 200):
        rate = per_core * executors * 4
        hours = TEN_BILLION / rate / 3600
        print(f"| {executors} executors x 4 cores at the measured per-core rate | {hours:,.2f} |")
    (OUT / "slice_bench.json").write_text(
        json.dumps(
            {"statements": n, "load_average": load, "medians": rows, "runs": runs},
            indent=2,
            sort_keys=True,
        )
        + "\n"
    )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())

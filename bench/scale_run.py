"""A run at real size: from a 20-million-statement compressed dump to a released vocabulary.

Not a test: a script anyone can run (standard library and kgkit only) to see what each step
of the job costs at a size where a real dump's habits show. It

1. writes a deterministic synthetic dump (``bench/synth.py``; 85 % of its statements outside
   the profile, gzip) of about ``--statements`` statements;
2. slices it with ``kgkit slice --roots`` (the profile's predicates, two languages, everything
   below one root: two passes over the dump);
3. imports the slice into a fresh workspace;
4. compiles a vocabulary of every topic below that root;
5. releases it.

Each step runs as its own process (the command line, as a user would type it), and the
script records its wall time, CPU time, peak memory (the process's own, from the kernel's
accounting of the finished child), the disk its output takes, and the machine's load average
when it started. ``--statements`` smaller than the default gives the same run at a smaller
size, so two runs show which step grows faster than its input.

    python bench/scale_run.py                          # 20 million statements
    python bench/scale_run.py --statements 5000000     # a quarter of it
    python bench/scale_run.py --keep /tmp/scale        # keep the files (they are large)

Writes a Markdown table to standard output and bench/out/scale_run-N.json.
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
OUT = HERE / "out"
sys.path.insert(0, str(ROOT))

from bench.synth import BASE, entities_for_triples  # noqa: E402

OTHER_RATIO = 0.85
SPEC = """\
name: synth
title: Synthetic topics at scale
namespace: http://example.org/vocab/synth/
graphs: [synth]
select:
  - template: descendants
    params: {{root: "<{root}>"}}
    include_root: true
languages:
  required: [en]
  optional: [de]
  missing: drop
aliases:
  ambiguous: keep
"""


def _du(path: Path) -> int:
    if path.is_file():
        return path.stat().st_size
    total = 0
    for dirpath, _dirs, files in os.walk(path):
        for f in files:
            p = Path(dirpath) / f
            if not p.is_symlink():
                total += p.stat().st_size
    return total


def _measured(cmd: list[str]) -> list[str]:
    """Wrap ``cmd`` so that the child's own peak memory and CPU time are printed by it."""
    return [sys.executable, str(Path(__file__).resolve()), "--measure", "--", *cmd]


def _measure_child(cmd: list[str]) -> int:
    proc = subprocess.Popen(cmd, stdin=subprocess.DEVNULL)
    _pid, status, ru = os.wait4(proc.pid, 0)
    stats = {
        "cpu_seconds": round(ru.ru_utime + ru.ru_stime, 2),
        "peak_rss_mb": round(ru.ru_maxrss / 1024, 1),
    }
    sys.stderr.write("KGKIT-SCALE " + json.dumps(stats) + "\n")
    return os.waitstatus_to_exitcode(status)


def _step(name: str, cmd: list[str], cwd: Path, output: Path) -> dict:
    load = os.getloadavg()[0]
    t0 = time.perf_counter()
    res = subprocess.run(_measured(cmd), cwd=cwd, capture_output=True, stdin=subprocess.DEVNULL)
    wall = time.perf_counter() - t0
    err = res.stderr.decode("utf-8", "replace")
    if res.returncode != 0:
        sys.stderr.write(err)
        raise SystemExit(f"step {name} failed (exit {res.returncode}): {' '.join(cmd)}")
    stats = {}
    for line in err.splitlines():
        if line.startswith("KGKIT-SCALE "):
            stats = json.loads(line.split(" ", 1)[1])
    row = {
        "step": name,
        "command": " ".join(Path(c).name if c == sys.executable else c for c in cmd),
        "seconds": round(wall, 2),
        "load_average": round(load, 2),
        "disk_mb": round(_du(output) / 1e6, 1),
        **stats,
        "stdout_tail": res.stdout.decode("utf-8", "replace").strip().splitlines()[-3:],
    }
    print(
        f"  {name:<8} {row['seconds']:8.1f} s  cpu {stats.get('cpu_seconds', 0):8.1f} s  "
        f"peak {stats.get('peak_rss_mb', 0):8.0f} MB  disk {row['disk_mb']:8.1f} MB  "
        f"(load {load:.1f})",
        file=sys.stderr,
        flush=True,
    )
    return row


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--statements", type=int, default=20_000_000)
    ap.add_argument("--roots", type=int, default=2, help="top-level entities of the dump")
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--keep", type=Path, help="folder to work in and keep")
    ap.add_argument("--measure", action="store_true", help=argparse.SUPPRESS)
    ap.add_argument("cmd", nargs="*", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.measure:
        return _measure_child(args.cmd)

    kgkit = [sys.executable, "-m", "kgkit"]
    work = args.keep or Path(tempfile.mkdtemp(prefix="kgkit-scale-"))
    work.mkdir(parents=True, exist_ok=True)
    dump = work / "dump.nt.gz"
    ws = work / "ws"
    if ws.exists():
        shutil.rmtree(ws)
    entities = entities_for_triples(args.statements, OTHER_RATIO)
    root = f"{BASE}e/0"
    rows = []
    topics = None
    try:
        if dump.is_file():
            print(f"  generate: reusing {dump}", file=sys.stderr)
        else:
            rows.append(
                _step(
                    "generate",
                    [
                        sys.executable,
                        str(HERE / "synth.py"),
                        str(dump),
                        "--entities",
                        str(entities),
                        "--seed",
                        "20",
                        "--other-ratio",
                        str(OTHER_RATIO),
                        "--roots",
                        str(args.roots),
                    ],
                    ROOT,
                    dump,
                )
            )
        subprocess.run([*kgkit, "init", str(ws)], check=True, capture_output=True)
        (ws / "vocab" / "synth.yaml").write_text(SPEC.format(root=root), encoding="utf-8")
        sliced = ws / "slice.nt.gz"
        rows.append(
            _step(
                "slice",
                [
                    *kgkit,
                    "slice",
                    str(dump),
                    "-o",
                    str(sliced),
                    "--scope",
                    "profile",
                    "--literal-languages",
                    "en,de",
                    "--roots",
                    f"<{root}>",
                    "--jobs",
                    str(args.jobs),
                    "--quiet",
                ],
                ws,
                sliced,
            )
        )
        rows.append(
            _step(
                "import",
                [*kgkit, "import", str(sliced), "--graph", "synth", "--quiet"],
                ws,
                ws / ".kgkit",
            )
        )
        rows.append(
            _step("compile", [*kgkit, "compile", "vocab/synth.yaml"], ws, ws / "vocab" / "synth")
        )
        rows.append(
            _step("release", [*kgkit, "release", "vocab/synth.yaml"], ws, ws / "vocab" / "synth")
        )
        report = json.loads((ws / "vocab" / "synth" / "build" / "report.json").read_text())
        topics = report["counts"]["topics"]
    finally:
        if args.keep is None:
            shutil.rmtree(work, ignore_errors=True)

    dump_mb = round(_du(dump) / 1e6, 1) if dump.exists() else None
    print()
    print(
        f"dump: about {args.statements:,} statements ({entities:,} entities, "
        f"{OTHER_RATIO:.0%} outside the profile), {dump_mb} MB gzip; vocabulary: {topics:,} topics"
    )
    print()
    print("| step | wall s | CPU s | peak memory MB | disk MB | load average |")
    print("|---|---:|---:|---:|---:|---:|")
    for r in rows:
        print(
            f"| {r['step']} | {r['seconds']:.1f} | {r.get('cpu_seconds', 0):.1f} | "
            f"{r.get('peak_rss_mb', 0):.0f} | {r['disk_mb']:.1f} | {r['load_average']:.1f} |"
        )
    OUT.mkdir(exist_ok=True)
    (OUT / f"scale_run-{args.statements}.json").write_text(
        json.dumps(
            {"statements": args.statements, "entities": entities, "topics": topics, "rows": rows},
            indent=2,
            sort_keys=True,
        )
        + "\n"
    )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())

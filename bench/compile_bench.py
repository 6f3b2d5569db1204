"""Benchmark: compiling a vocabulary of about 200,000 topics from a synthetic graph.

For N entities (default 200,000) and N/2, it writes a synthetic dump
(``bench.synth.write_synthetic_dump``, one root so that one ``descendants`` run selects
every entity), imports it into a fresh workspace, then measures in separate
processes (so each peak memory is its own):

- the full ``compile_vocabulary`` (selection, fetching, curation, hierarchy repair,
  aliases, all five build files written);
- the baseline: fetching the same topics, their labels and their parent links with
  one SPARQL query each, every row read, nothing else.

It prints time and peak RSS of each, the ratio compile / baseline (target: within 3x)
and the ratio of the compile time at N to the time at N/2 (target: within 2.3x, no
quadratic step).

    python bench/compile_bench.py                  # 200k and 100k topics
    python bench/compile_bench.py --entities 20000 # a quick run
    python bench/compile_bench.py --keep /tmp/cb  # keep the imported workspaces for another run
"""

from __future__ import annotations

import argparse
import contextlib
import json
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

BASE = "http://synthetic.kgkit.invalid/"
SPEC = """\
name: synth
title: Synthetic
namespace: http://example.org/vocab/synth/
select:
  - template: descendants
    params: {root: "<http://synthetic.kgkit.invalid/e/0>"}
    include_root: true
languages:
  optional: [en, de, fr]
aliases:
  ambiguous: keep
"""

SKOS = "http://www.w3.org/2004/02/skos/core#"
RDFS = "http://www.w3.org/2000/01/rdf-schema#"
# The baseline: the same topics, their labels and their parent links, one SPARQL query
# each. The selection is the whole graph here (one root), so the label and parent
# queries need no join with it: the cheapest shape for exactly the same rows.
BASELINE = {
    "topics": f"SELECT ?item WHERE {{ ?item (<{SKOS}broader>|<{RDFS}subClassOf>)* <{BASE}e/0> }}",
    "labels": f"SELECT ?item ?label WHERE {{ ?item <{SKOS}prefLabel> ?label }}",
    "parents": f"SELECT ?item ?parent WHERE {{ ?item <{SKOS}broader>|<{RDFS}subClassOf> ?parent }}",
}


def _cpu() -> float:
    r = resource.getrusage(resource.RUSAGE_SELF)
    return r.ru_utime + r.ru_stime


def _peak_mb() -> float:
    """Peak resident memory of this process (VmHWM: ru_maxrss would count the parent's
    memory before exec)."""
    try:
        for line in Path("/proc/self/status").read_text().splitlines():
            if line.startswith("VmHWM:"):
                return int(line.split()[1]) / 1024
    except OSError:
        pass
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def child_compile(ws_dir: str, gates: bool = True) -> dict:
    from kgkit.vocab.compile import compile_vocabulary
    from kgkit.workspace import load_workspace

    ws = load_workspace(ws_dir)
    steps: dict[str, float] = {}
    last = [time.perf_counter(), "opening"]

    def progress(step: str) -> None:
        now = time.perf_counter()
        name = last[1].split(" <")[0]  # one entry per kind of fetch
        steps[name] = steps.get(name, 0.0) + now - last[0]
        last[:] = [now, step]

    t0, c0 = time.perf_counter(), _cpu()
    res = compile_vocabulary(ws, ws.vocab_dir / "synth.yaml", progress=progress, gates=gates)
    progress("done")
    return {
        "cpu": _cpu() - c0,
        "steps": {k: round(v, 2) for k, v in steps.items()},
        "seconds": time.perf_counter() - t0,
        "peak_mb": _peak_mb(),
        "topics": res.summary["topics"],
        "aliases": res.summary["aliases"],
    }


def child_baseline(ws_dir: str) -> dict:
    from kgkit.query import connect, run_query
    from kgkit.workspace import load_workspace

    ws = load_workspace(ws_dir)
    out = {}
    t0, c0 = time.perf_counter(), _cpu()
    with connect(ws) as backend:
        for name, text in BASELINE.items():
            t = time.perf_counter()
            n = 0
            for row in run_query(backend, text).rows:
                for term in row:
                    if term is not None:
                        term.value  # noqa: B018 - read every value, as the compiler must
                n += 1
            out[name] = {"rows": n, "seconds": time.perf_counter() - t}
    out["seconds"] = time.perf_counter() - t0
    out["cpu"] = _cpu() - c0
    out["peak_mb"] = _peak_mb()
    return out


def _run_child(kind: str, ws_dir: Path, gates: bool = True) -> dict:
    r = subprocess.run(
        [sys.executable, __file__, "--child", kind, str(ws_dir)]
        + ([] if gates else ["--without-gates"]),
        check=True,
        capture_output=True,
        text=True,
    )
    return json.loads(r.stdout.strip().splitlines()[-1])


def prepare(folder: Path, entities: int) -> Path:
    from bench.synth import write_synthetic_dump
    from kgkit.ingest import ImportOptions, import_files, make_slice
    from kgkit.workspace import init_workspace

    ws = init_workspace(folder / f"ws-{entities}")
    dump = folder / f"synth-{entities}.nt"
    counts = write_synthetic_dump(dump, entities=entities, seed=7, roots=1)
    t0 = time.perf_counter()
    import_files(
        ws, [str(dump)], ImportOptions(graph="synth", slice=make_slice(ws, scope="profile"))
    )
    print(
        f"  {entities:,} entities: dump of {counts['triples']:,} triples imported "
        f"(profile statements only) in {time.perf_counter() - t0:.1f} s",
        flush=True,
    )
    dump.unlink()
    (ws.vocab_dir / "synth.yaml").write_text(SPEC, encoding="utf-8")
    return ws.root


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--entities", type=int, default=200_000)
    ap.add_argument(
        "--repeat", type=int, default=2, help="runs of each, alternating; the best counts"
    )
    ap.add_argument("--keep", type=Path, help="keep (and reuse) the prepared workspaces here")
    ap.add_argument(
        "--without-gates",
        action="store_true",
        help="compile without the release gates (compile_vocabulary(gates=False))",
    )
    ap.add_argument("--child", nargs=2, metavar=("KIND", "WORKSPACE"), help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.child:
        kind, ws_dir = args.child
        result = (
            child_compile(ws_dir, not args.without_gates)
            if kind == "compile"
            else child_baseline(ws_dir)
        )
        print(json.dumps(result))
        return 0

    sizes = [args.entities, args.entities // 2]
    best: dict[int, dict[str, dict]] = {}
    with contextlib.ExitStack() as stack:
        if args.keep:
            folder = args.keep
            folder.mkdir(parents=True, exist_ok=True)
        else:
            folder = Path(stack.enter_context(tempfile.TemporaryDirectory(prefix="kgkit-cb-")))
        for n in sizes:
            ws_dir = folder / f"ws-{n}"
            if not (ws_dir / "kgkit.yaml").exists():
                prepare(folder, n)
            runs: dict[str, list[dict]] = {"baseline": [], "compile": []}
            for _ in range(args.repeat):
                for kind in ("baseline", "compile"):
                    runs[kind].append(_run_child(kind, ws_dir, not args.without_gates))
            best[n] = {k: min(v, key=lambda r: r["seconds"]) for k, v in runs.items()}
            cpu = {k: min(r["cpu"] for r in v) for k, v in runs.items()}
            comp, base = best[n]["compile"], best[n]["baseline"]
            comp["cpu_best"], base["cpu_best"] = cpu["compile"], cpu["baseline"]
            print(
                f"  {n:,} topics: compile {comp['seconds']:.2f} s ({cpu['compile']:.2f} s CPU), "
                f"peak {comp['peak_mb']:.0f} MB, {comp['aliases']:,} aliases",
                flush=True,
            )
            print(
                "    steps: " + ", ".join(f"{k} {v:.2f} s" for k, v in comp["steps"].items()),
                flush=True,
            )
            print(
                f"    baseline {base['seconds']:.2f} s ({cpu['baseline']:.2f} s CPU): topics "
                f"{base['topics']['seconds']:.2f} s, labels {base['labels']['seconds']:.2f} s "
                f"for {base['labels']['rows']:,} rows, parents {base['parents']['seconds']:.2f} s; "
                f"peak {base['peak_mb']:.0f} MB",
                flush=True,
            )
    big, half = sizes
    comp, base = best[big]["compile"], best[big]["baseline"]
    print(
        f"compile / baseline at {big:,}: {comp['seconds'] / base['seconds']:.2f}x wall, "
        f"{comp['cpu_best'] / base['cpu_best']:.2f}x CPU (target <= 3x)"
    )
    small = best[half]["compile"]
    print(
        f"compile at {big:,} / at {half:,}: {comp['seconds'] / small['seconds']:.2f}x wall, "
        f"{comp['cpu_best'] / small['cpu_best']:.2f}x CPU (target <= 2.3x)"
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())

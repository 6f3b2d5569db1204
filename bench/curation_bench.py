"""Curation at scale: reading and applying 20,000 edits, against reading the file alone.

    python bench/curation_bench.py [--edits 20000] [--links 100000] [--repeat 3]

Baseline: PyYAML's C safe loader reading the same curation file into plain data (what
any YAML reader pays). Measured, alternating with the baseline in each round:
``load_curation`` (kgkit's limited one-pass reader plus the edit validation) and
``apply_curation`` of the edits to a synthetic vocabulary of 20,000 topics whose graph
holds ``--links`` parent links (a merge used to scan all of them). Prints CPU seconds
and the ratio of each to the baseline of the same round, with the load average.
"""

from __future__ import annotations

import argparse
import os
import random
import tempfile
import time
from pathlib import Path

import yaml

from kgkit.vocab.curation import apply_curation, load_curation
from kgkit.vocab.model import Topic

ACTIONS = ("add_alias", "remove_alias", "set_label", "merge", "add_parent", "add_topic")


def write_edits(path: Path, n_edits: int, n_topics: int, seed: int = 1) -> None:
    rng = random.Random(seed)
    out = ["edits:"]
    for k in range(n_edits):
        t, o = f"t{rng.randrange(n_topics)}", f"t{rng.randrange(n_topics)}"
        a = ACTIONS[k % len(ACTIONS)]
        body = {
            "add_alias": f"{{topic: {t}, alias: new name {k}, language: en}}",
            "remove_alias": f"{{topic: {t}, alias: alias {t[1:]}, language: en}}",
            "set_label": f"{{topic: {t}, label: label {k}, language: en}}",
            "merge": f"{{topic: {t}, into: {o}}}",
            "add_parent": f"{{topic: {t}, parent: {o}}}",
            "add_topic": f"{{id: n{k}, labels: {{en: new topic {k}}}, parents: [{o}]}}",
        }[a]
        out.append(f"  - {a}: {body}\n    note: edit {k}")
    path.write_text("\n".join(out) + "\n", encoding="utf-8")


def vocabulary(n_topics: int, n_links: int, seed: int = 2):
    rng = random.Random(seed)
    topics = {}
    for i in range(n_topics):
        t = Topic(id=f"t{i}", source=f"http://example.org/t{i}")
        t.labels.append(("en", f"topic {i}", 0))
        t.aliases.append(("en", f"alias {i}", "alias"))
        topics[t.id] = t
    links = {f"t{i}": [f"t{rng.randrange(i)}"] if i else [] for i in range(n_topics)}
    for j in range(n_links - n_topics):
        links[f"http://example.org/e{j}"] = [f"t{rng.randrange(n_topics)}"]
    return topics, links


def cpu(f):
    start = time.process_time()
    result = f()
    return time.process_time() - start, result


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--edits", type=int, default=20_000)
    ap.add_argument("--topics", type=int, default=20_000)
    ap.add_argument("--links", type=int, default=100_000)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "big.curation.yaml"
        write_edits(path, args.edits, args.topics)
        text = path.read_text(encoding="utf-8")
        print(f"{args.edits} edits ({len(text) / 1e6:.1f} MB), {args.links} parent links")
        print("round  baseline(s)  load(s)  ratio  apply(s)  ratio  load avg")
        for r in range(args.repeat):
            base, _ = cpu(lambda: yaml.load(text, Loader=yaml.CSafeLoader))
            load, edits = cpu(lambda: load_curation(path))
            topics, links = vocabulary(args.topics, args.links)
            apply, _ = cpu(
                lambda edits=edits, topics=topics, links=links: apply_curation(
                    edits, topics, links, lambda ref: ref, lambda t: {}
                )
            )
            avg = os.getloadavg()[0]
            print(
                f"{r + 1:>5}  {base:11.2f}  {load:7.2f}  {load / base:5.2f}"
                f"  {apply:8.2f}  {apply / base:5.2f}  {avg:8.1f}"
            )


if __name__ == "__main__":
    main()

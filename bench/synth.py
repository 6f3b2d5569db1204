"""Deterministic synthetic knowledge-graph dumps (N-Triples) for benchmarks and tests.

Standard library only. The same arguments always give the same bytes (a seeded
``random.Random``; gzip output is written with ``mtime=0``).

What a dump holds, per entity ``http://synthetic.kgkit.invalid/e/N``:

- ``rdf:type`` one of 20 classes ``.../class/CK`` (1 statement);
- ``skos:prefLabel`` in ``en`` (95 % of entities), ``de`` (70 %), ``fr`` (60 %), and an
  "other language" label in ``es`` or ``it`` (20 %), so ``--literal-languages`` has work to do;
- ``skos:altLabel`` aliases: 0 to 2 in ``en``, sometimes one in ``de`` (about 1.0 on average);
  aliases are drawn from a small word pool, so some are shared by several entities;
- ``skos:definition`` in ``en`` (50 %), some of them holding an escaped quote;
- a parent link, ``skos:broader`` (80 %) or ``rdfs:subClassOf`` (20 %), to an entity with a
  smaller number, so the hierarchy has no cycles; entity N's parent is about N / 3.5, which
  makes it deep (depth grows like log(N), about 11 at a million entities) with ``roots``
  roots; ``multi_parent`` of the entities get a second parent;
- ``owl:sameAs`` to ``http://synthetic.kgkit.invalid/alt/N`` (5 %);
- "other statements" with 50 predicates ``.../p/PK`` outside the default profile (numbers,
  dates, plain strings, links to other entities), so that ``--scope profile`` drops them.

How size scales: the profile statements above average about 6.0 per entity, and the other
statements make up ``other_ratio`` of the whole dump, so the dump holds about
``entities * 6.0 / (1 - other_ratio)`` triples:

=================  ====================  ===========================
``other_ratio``    triples per entity    triples at 100 000 entities
=================  ====================  ===========================
0.4 (default)      about 10              about 1.0 million
0.8                about 30              about 3.0 million
0.0                about 6               about 0.6 million
=================  ====================  ===========================

``entities_for_triples(n, other_ratio)`` inverts that estimate; the returned counts are exact.

Usage::

    from bench.synth import write_synthetic_dump
    counts = write_synthetic_dump("dump.nt.gz", entities=100_000, seed=7)
    counts["triples"]                      # exact number of lines written

    python bench/synth.py dump.nt --entities 100000 --seed 7 --other-ratio 0.8
"""

from __future__ import annotations

import argparse
import gzip
import json
import os
import random
import sys
from pathlib import Path

__all__ = [
    "BASE",
    "PROFILE_PER_ENTITY",
    "entities_for_triples",
    "write_synthetic_dump",
]

BASE = "http://synthetic.kgkit.invalid/"
RDF_TYPE = "<http://www.w3.org/1999/02/22-rdf-syntax-ns#type>"
PREF = "<http://www.w3.org/2004/02/skos/core#prefLabel>"
ALT = "<http://www.w3.org/2004/02/skos/core#altLabel>"
DEFN = "<http://www.w3.org/2004/02/skos/core#definition>"
BROADER = "<http://www.w3.org/2004/02/skos/core#broader>"
SUBCLASS = "<http://www.w3.org/2000/01/rdf-schema#subClassOf>"
SAME_AS = "<http://www.w3.org/2002/07/owl#sameAs>"
XSD = "http://www.w3.org/2001/XMLSchema#"

# expected profile statements per entity with the default probabilities:
# type 1 + labels (0.95 + 0.7 + 0.6 + 0.2) + aliases 1.0 + definition 0.5 + parents ~1.02
# + same-as 0.05
PROFILE_PER_ENTITY = 6.02

_SYLLABLES = tuple(
    [
        "ka",
        "no",
        "ri",
        "ta",
        "mel",
        "vor",
        "sen",
        "dul",
        "pra",
        "tin",
        "os",
        "ber",
        "gal",
        "fen",
        "lio",
        "mar",
        "qui",
        "ston",
        "wel",
        "ade",
        "hul",
        "rin",
        "cas",
        "tor",
        "vel",
        "ama",
        "dor",
        "ish",
    ]
)
_DE_SUFFIX = ("ung", "heit", "wesen", "kunde", "bau", "tum")
_FR_PREFIX = ("le ", "la ", "l'", "les ")
_FR_ACCENT = str.maketrans({"e": "é", "a": "à"})
_DE_ACCENT = str.maketrans({"u": "ü", "o": "ö"})
_ALIAS_POOL_SIZE = 5000
_OTHER_PREDICATES = 50
_CLASSES = 20


def entities_for_triples(triples: int, other_ratio: float = 0.4) -> int:
    """Number of entities that gives about ``triples`` statements."""
    return max(1, round(triples * (1.0 - other_ratio) / PROFILE_PER_ENTITY))


def _word(rng: random.Random, n: int) -> str:
    return "".join(rng.choice(_SYLLABLES) for _ in range(n))


def _lit(text: str, lang: str) -> str:
    text = text.replace("\\", "\\\\").replace('"', '\\"')
    return f'"{text}"@{lang}'


def write_synthetic_dump(
    path: str | os.PathLike,
    entities: int = 100_000,
    seed: int = 1,
    other_ratio: float = 0.4,
    roots: int | None = None,
    multi_parent: float = 0.02,
    compress: str | None = None,
) -> dict[str, int]:
    """Write a synthetic N-Triples dump to ``path`` and return exact counts.

    Parameters
    ----------
    path : output file; ``.gz`` at the end (or ``compress="gzip"``) writes gzip.
    entities : number of entities (about 10 triples each with the default ``other_ratio``).
    seed : random seed; equal arguments give equal bytes.
    other_ratio : share of all statements whose predicate is outside the default profile
        (0 <= other_ratio < 1).
    roots : number of top-level entities (default: ``max(3, entities // 20000)``).
    multi_parent : share of entities with a second parent.
    compress : ``None`` (decide by suffix), ``"gzip"`` or ``"none"``.

    Returns
    -------
    dict with ``entities``, ``triples``, ``profile_triples``, ``other_triples``, ``roots``,
    ``multi_parent``, ``parent_links``, ``labels_en``, ``labels_de``, ``labels_fr``,
    ``labels_other_language``, ``aliases``, ``bytes`` (uncompressed).
    """
    if not 0.0 <= other_ratio < 1.0:
        raise ValueError("other_ratio must be in [0, 1)")
    if entities < 1:
        raise ValueError("entities must be at least 1")
    path = Path(path)
    if compress is None:
        compress = "gzip" if path.suffix == ".gz" else "none"
    rng = random.Random(seed)
    n_roots = roots if roots is not None else max(3, entities // 20000)
    n_roots = max(1, min(n_roots, entities))
    alias_pool = [_word(rng, rng.randint(2, 3)) for _ in range(_ALIAS_POOL_SIZE)]
    other_per_profile = other_ratio / (1.0 - other_ratio)
    counts = dict.fromkeys(
        (
            "triples",
            "profile_triples",
            "other_triples",
            "multi_parent",
            "parent_links",
            "labels_en",
            "labels_de",
            "labels_fr",
            "labels_other_language",
            "aliases",
            "bytes",
        ),
        0,
    )
    counts["entities"] = entities
    counts["roots"] = n_roots

    tmp = path.with_name(path.name + ".tmp")
    raw = open(tmp, "wb")  # noqa: SIM115 - closed below, wrapped by gzip
    out = (
        gzip.GzipFile(fileobj=raw, mode="wb", mtime=0, compresslevel=6)
        if compress == "gzip"
        else raw
    )
    try:
        lines: list[str] = []
        for i in range(entities):
            s = f"<{BASE}e/{i}>"
            prof: list[str] = []
            stem = _word(rng, rng.randint(2, 4))
            prof.append(f"{s} {RDF_TYPE} <{BASE}class/C{rng.randrange(_CLASSES)}> .")
            if rng.random() < 0.95:
                prof.append(f"{s} {PREF} {_lit(f'{stem} {i}', 'en')} .")
                counts["labels_en"] += 1
            if rng.random() < 0.7:
                de = stem.capitalize().translate(_DE_ACCENT) + rng.choice(_DE_SUFFIX)
                prof.append(f"{s} {PREF} {_lit(f'{de} {i}', 'de')} .")
                counts["labels_de"] += 1
            if rng.random() < 0.6:
                fr = rng.choice(_FR_PREFIX) + stem.translate(_FR_ACCENT)
                prof.append(f"{s} {PREF} {_lit(f'{fr} {i}', 'fr')} .")
                counts["labels_fr"] += 1
            if rng.random() < 0.2:
                lang = rng.choice(("es", "it"))
                prof.append(f"{s} {PREF} {_lit(f'{stem}o {i}', lang)} .")
                counts["labels_other_language"] += 1
            r = rng.random()
            n_alias = 0 if r < 0.35 else 1 if r < 0.75 else 2
            for _ in range(n_alias):
                prof.append(f"{s} {ALT} {_lit(rng.choice(alias_pool), 'en')} .")
            if rng.random() < 0.2:
                prof.append(f"{s} {ALT} {_lit(rng.choice(alias_pool).capitalize(), 'de')} .")
                n_alias += 1
            counts["aliases"] += n_alias
            if rng.random() < 0.5:
                quote = ' called "' + stem + '"' if rng.random() < 0.1 else ""
                text = f"a synthetic topic{quote}, number {i}, of kind {rng.randrange(_CLASSES)}"
                prof.append(f"{s} {DEFN} {_lit(text, 'en')} .")
            if i >= n_roots:
                parents = {_parent(rng, i)}
                if rng.random() < multi_parent:
                    second = _parent(rng, i)
                    if second not in parents:
                        parents.add(second)
                        counts["multi_parent"] += 1
                for p in sorted(parents):
                    pred = BROADER if rng.random() < 0.8 else SUBCLASS
                    prof.append(f"{s} {pred} <{BASE}e/{p}> .")
                counts["parent_links"] += len(parents)
            if rng.random() < 0.05:
                prof.append(f"{s} {SAME_AS} <{BASE}alt/{i}> .")
            expect = len(prof) * other_per_profile
            n_other = int(expect) + (1 if rng.random() < expect - int(expect) else 0)
            other = [_other(rng, s, entities) for _ in range(n_other)]
            counts["profile_triples"] += len(prof)
            counts["other_triples"] += n_other
            lines.extend(prof)
            lines.extend(other)
            if len(lines) >= 20000:
                data = ("\n".join(lines) + "\n").encode("utf-8")
                counts["bytes"] += len(data)
                counts["triples"] += len(lines)
                out.write(data)
                lines = []
        if lines:
            data = ("\n".join(lines) + "\n").encode("utf-8")
            counts["bytes"] += len(data)
            counts["triples"] += len(lines)
            out.write(data)
    except BaseException:
        out.close()
        raw.close()
        tmp.unlink(missing_ok=True)
        raise
    out.close()
    raw.close()
    os.replace(tmp, path)
    return counts


def _parent(rng: random.Random, i: int) -> int:
    p = int(i / rng.uniform(2.0, 5.0))
    return min(p, i - 1)


def _other(rng: random.Random, s: str, entities: int) -> str:
    k = rng.randrange(_OTHER_PREDICATES)
    p = f"<{BASE}p/P{k}>"
    kind = k % 5
    if kind == 0:
        o = f'"{rng.randrange(10**6)}"^^<{XSD}integer>'
    elif kind == 1:
        y, m, d = rng.randrange(1800, 2030), rng.randint(1, 12), rng.randint(1, 28)
        o = f'"{y}-{m:02d}-{d:02d}"^^<{XSD}date>'
    elif kind == 2:
        o = f'"{_word(rng, 3)} {rng.randrange(1000)}"'
    elif kind == 3:
        o = f"<{BASE}e/{rng.randrange(entities)}>"
    else:
        o = f'"{rng.random():.6f}"^^<{XSD}double>'
    return f"{s} {p} {o} ."


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description="Write a deterministic synthetic N-Triples dump.")
    ap.add_argument("path", help="output file (.gz at the end writes gzip)")
    ap.add_argument("--entities", type=int, default=None, help="number of entities")
    ap.add_argument("--triples", type=int, default=None, help="about this many triples instead")
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--other-ratio", type=float, default=0.4)
    ap.add_argument("--roots", type=int, default=None)
    ap.add_argument("--multi-parent", type=float, default=0.02)
    args = ap.parse_args(argv)
    if args.entities is None:
        args.entities = (
            entities_for_triples(args.triples, args.other_ratio) if args.triples else 100_000
        )
    counts = write_synthetic_dump(
        args.path,
        entities=args.entities,
        seed=args.seed,
        other_ratio=args.other_ratio,
        roots=args.roots,
        multi_parent=args.multi_parent,
    )
    json.dump(counts, sys.stdout, sort_keys=True)
    sys.stdout.write("\n")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())

"""Benchmark of ``kgkit probe``: the Aho-Corasick pass against a loop over the aliases.

Builds a deterministic lexicon of ``--aliases`` invented aliases (two to three words
from a syllable pool, so that keys overlap and share prefixes the way real ones do)
and a text of ``--words`` words that holds some of them, then measures in one run:

- loading the lexicon (``load_lexicon``: reading the TSV, building the automaton);
- ``Lexicon.find`` on the text (normalisation with offsets, all matches, boundaries,
  leftmost-longest selection);
- the baseline: one compiled word-bounded regular expression per alias, run over
  the same normalised text (what a hand-written loop over aliases does), on a
  sample of ``--baseline-aliases`` aliases and scaled to the whole lexicon.

Prints the figures and the ratio baseline / probe. Usage::

    python bench/probe_bench.py --aliases 200000 --words 100000
"""

from __future__ import annotations

import argparse
import random
import re
import tempfile
import time
from pathlib import Path

from kgkit.probe import load_lexicon, normalise_with_offsets
from kgkit.vocab.aliases import match_key

SYLLABLES = [
    "bra", "quil", "tid", "vel", "orr", "sker", "hol", "mar", "wen", "fal", "cres", "eb",
    "pen", "sto", "yar", "gul", "sed", "wra", "lo", "mi", "na", "ro", "ta", "ki",
]  # fmt: skip


def _word(rng: random.Random) -> str:
    return "".join(rng.choice(SYLLABLES) for _ in range(rng.randint(1, 3)))


def make_lexicon(folder: Path, n: int, rng: random.Random) -> list[str]:
    aliases = sorted({" ".join(_word(rng) for _ in range(rng.randint(2, 3))) for _ in range(n)})
    rows = sorted((match_key(a), f"t{i}", a) for i, a in enumerate(aliases))
    with open(folder / "lexicon.tsv", "w", encoding="utf-8") as fh:
        fh.write("alias\tmatch_key\ttopic\tlanguage\tkind\tshared_by\n")
        for key, topic, alias in rows:
            fh.write(f"{alias}\t{key}\t{topic}\ten\talias\t1\n")
    return aliases


def make_text(aliases: list[str], words: int, rng: random.Random) -> str:
    out: list[str] = []
    while len(out) < words:
        if rng.random() < 0.1:
            out.extend(rng.choice(aliases).title().split())
        else:
            out.append(_word(rng))
    return " ".join(out[:words]) + "."


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--aliases", type=int, default=200_000)
    ap.add_argument("--words", type=int, default=100_000)
    ap.add_argument("--baseline-aliases", type=int, default=200)
    args = ap.parse_args()
    rng = random.Random(20261202)
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        aliases = make_lexicon(folder, args.aliases, rng)
        text = make_text(aliases, args.words, rng)

        t0 = time.perf_counter()
        lexicon = load_lexicon(folder)
        t_load = time.perf_counter() - t0
        t0 = time.perf_counter()
        hits = lexicon.find(text)
        t_find = time.perf_counter() - t0

        norm, _spans = normalise_with_offsets(text)
        sample = rng.sample(lexicon.keys, min(args.baseline_aliases, len(lexicon.keys)))
        t0 = time.perf_counter()
        found = 0
        for key in sample:
            found += sum(1 for _ in re.finditer(r"(?<!\w)" + re.escape(key) + r"(?!\w)", norm))
        t_sample = time.perf_counter() - t0
        t_loop = t_sample * len(lexicon.keys) / len(sample)

    print(f"lexicon: {len(lexicon.keys):,} keys; text: {args.words:,} words, {len(text):,} chars")
    print(f"load_lexicon (TSV + automaton):   {t_load:8.3f} s")
    print(f"Lexicon.find (probe):              {t_find:8.3f} s  ({len(hits):,} hits)")
    print(
        f"regex loop over {len(sample):,} aliases:    {t_sample:8.3f} s"
        f"  -> {t_loop:,.1f} s for all {len(lexicon.keys):,} (scaled)"
    )
    print(f"ratio loop / probe (find only):    {t_loop / t_find:8.1f}x")


if __name__ == "__main__":
    main()

"""Probing text with a vocabulary: where would an annotator's first pass tag it?

The lexicon of a release (``lexicon.tsv``) lists every alias with its *match
key*: NFKC, whitespace folded to single spaces, then Unicode case folding. A
probe normalises the text the same way, keeping a map from every normalised
character back to the original text, and finds every key in it at once with an
Aho-Corasick automaton (``ahocorasick_rs``). Of the matches that start and end
on word boundaries, the leftmost-longest win and never overlap: "canoe polo
club" gives "canoe polo", not "canoe" and "polo".

A key shared by several topics is a hit with all of them as candidates; the
annotator has to choose, and so does the taxonomy owner.

Over a corpus (a folder of ``.txt`` files) the probe counts, per match key, the
share of documents in which it occurs. A key found in most documents tells an
annotator nothing about any one of them (the rule of thumb behind inverse
document frequency; common practice, no source): such keys are flagged, and the
aliases behind them can be written out as curation edits that remove them.

>>> normalise_with_offsets("Canoe\\u00a0 POLO")[0]
'canoe polo'
"""

from __future__ import annotations

import os
import re
import unicodedata
from collections.abc import Iterable
from dataclasses import dataclass, field
from pathlib import Path

import ahocorasick_rs
import yaml

from kgkit.errors import ArgumentError, ProbeError
from kgkit.files import write_text_atomic
from kgkit.inputs import file_error, read_text_file
from kgkit.vocab.folder import BuildFileError, read_lexicon, read_topics
from kgkit.vocab.model import LexiconRow, TopicRecord

__all__ = [
    "DEFAULT_THRESHOLD",
    "Candidate",
    "Hit",
    "Lexicon",
    "AliasShare",
    "CorpusReport",
    "ProbeError",
    "load_lexicon",
    "normalise_with_offsets",
    "probe_text",
    "probe_corpus",
    "curation_edits_for",
    "write_curation_edits",
]

#: Share of documents above which a key is flagged as too common to tag with.
#: Half the documents is a rule of thumb (common practice, no source).
DEFAULT_THRESHOLD = 0.5


@dataclass(frozen=True)
class Candidate:
    """A topic a hit may mean: its id, a label to show, and its parents."""

    topic: str
    label: str
    parents: tuple[tuple[str, str], ...]  # (parent id, parent label)
    aliases: tuple[str, ...]  # the lexicon entries of this topic under the hit's key

    def to_dict(self) -> dict:
        return {
            "topic": self.topic,
            "label": self.label,
            "parents": [{"topic": p, "label": lab} for p, lab in self.parents],
            "aliases": list(self.aliases),
        }


@dataclass(frozen=True)
class Hit:
    """One place in the text where a lexicon key occurs."""

    start: int  # character offsets into the original text, end exclusive
    end: int
    text: str  # the original text of the span
    key: str
    candidates: tuple[Candidate, ...]

    @property
    def is_ambiguous(self) -> bool:
        return len(self.candidates) > 1

    def to_dict(self) -> dict:
        return {
            "start": self.start,
            "end": self.end,
            "text": self.text,
            "key": self.key,
            "ambiguous": self.is_ambiguous,
            "candidates": [c.to_dict() for c in self.candidates],
        }


def _is_word(ch: str) -> bool:
    return ch.isalnum() or ch == "_" or unicodedata.category(ch).startswith("M")


def normalise_with_offsets(text: str) -> tuple[str, list[tuple[int, int]]]:
    """The match-key form of ``text`` and, per character of it, its span in ``text``.

    The same steps as the lexicon's match key (NFKC, whitespace runs folded to
    one space, case folding), applied per base character with its combining
    marks so that every output character can be traced back. Leading and
    trailing whitespace is kept as one space, so offsets stay aligned.
    """
    norm, starts, ends = _normalise(text)
    return norm, list(zip(starts, ends, strict=True))


_SPACE_RUNS = re.compile(r"(\s+)")


def _normalise(text: str) -> tuple[str, list[int], list[int]]:
    """:func:`normalise_with_offsets` with the spans as two lists (start, end)."""
    if unicodedata.is_normalized("NFKC", text):
        folded = text.casefold()
        # case folding never shortens a character, so equal lengths mean one for one;
        # then only runs of white space change length (re's \s is str.isspace)
        if len(folded) == len(text):
            out: list[str] = []
            starts: list[int] = []
            ends: list[int] = []
            pos = 0
            for piece in _SPACE_RUNS.split(folded):
                if not piece:
                    continue
                if piece[0].isspace():
                    out.append(" ")
                    starts.append(pos)
                    ends.append(pos + len(piece))
                else:
                    out.append(piece)
                    starts.extend(range(pos, pos + len(piece)))
                    ends.extend(range(pos + 1, pos + len(piece) + 1))
                pos += len(piece)
            return "".join(out), starts, ends
    chars: list[str] = []
    starts, ends = [], []
    i, n = 0, len(text)
    while i < n:
        j = i + 1
        while j < n and unicodedata.combining(text[j]):
            j += 1
        piece = unicodedata.normalize("NFKC", text[i:j]).casefold()
        for ch in piece:
            if ch.isspace():
                if chars and chars[-1] == " ":
                    ends[-1] = j
                    continue
                ch = " "
            chars.append(ch)
            starts.append(i)
            ends.append(j)
        i = j
    return "".join(chars), starts, ends


class Lexicon:
    """The match keys of a release or build, their topics, and an automaton over them."""

    def __init__(self, folder: Path, rows: list[LexiconRow], topics: dict[str, TopicRecord]):
        self.folder = folder
        self.topics = topics
        self.by_key: dict[str, list[LexiconRow]] = {}
        for row in rows:
            self.by_key.setdefault(row.match_key, []).append(row)
        self.keys = sorted(self.by_key)
        self._candidates: dict[str, tuple[Candidate, ...]] = {}
        self._automaton = (
            ahocorasick_rs.AhoCorasick(self.keys, matchkind=ahocorasick_rs.MATCHKIND_STANDARD)
            if self.keys
            else None
        )

    def label_of(self, topic: str, language: str | None = None) -> str:
        t = self.topics.get(topic)
        labels = t.labels if t is not None else {}
        if language and labels.get(language):
            return labels[language]
        for lang in ("en", "", *sorted(labels)):
            if labels.get(lang):
                return labels[lang]
        return topic

    def candidates(self, key: str) -> tuple[Candidate, ...]:
        """The topics a key may mean (computed once per key)."""
        if key not in self._candidates:
            self._candidates[key] = self._make_candidates(key)
        return self._candidates[key]

    def _make_candidates(self, key: str) -> tuple[Candidate, ...]:
        rows = self.by_key[key]
        out = []
        for topic in sorted({r.topic for r in rows}):
            mine = [r for r in rows if r.topic == topic]
            lang = mine[0].language
            t = self.topics.get(topic)
            parents = t.parents if t is not None else ()
            out.append(
                Candidate(
                    topic=topic,
                    label=self.label_of(topic, lang),
                    parents=tuple((p, self.label_of(p, lang)) for p in parents),
                    aliases=tuple(
                        sorted({f"{r.alias} ({r.language or '-'}, {r.kind})" for r in mine})
                    ),
                )
            )
        return tuple(out)

    def find(self, text: str) -> list[Hit]:
        """Every leftmost-longest, non-overlapping, word-bounded hit in ``text``."""
        if self._automaton is None or not text:
            return []
        norm, starts, ends = _normalise(text)
        found = []
        for index, s, e in self._automaton.find_matches_as_indexes(norm, overlapping=True):
            if s > 0 and _is_word(norm[s - 1]) and _is_word(norm[s]):
                continue
            if e < len(norm) and _is_word(norm[e]) and _is_word(norm[e - 1]):
                continue
            found.append((s, -(e - s), index))
        found.sort()
        hits: list[Hit] = []
        last_end = 0
        for s, neg_len, index in found:
            e = s - neg_len
            if s < last_end:
                continue
            last_end = e
            start, end = starts[s], ends[e - 1]
            key = self.keys[index]
            hits.append(Hit(start, end, text[start:end], key, self.candidates(key)))
        return hits


def load_lexicon(folder: Path | str) -> Lexicon:
    """Read ``lexicon.tsv`` (and ``topics.jsonl`` for labels and parents) of a release or build."""
    folder = Path(folder)
    path = folder / "lexicon.tsv"
    if not path.is_file():
        raise ProbeError(f"{folder}: no lexicon.tsv here; give a release or build folder")
    try:
        rows = read_lexicon(path)
        topics = read_topics(folder / "topics.jsonl", missing_ok=True)
    except BuildFileError as exc:
        raise ProbeError(str(exc)) from None
    return Lexicon(folder, rows, topics)


def probe_text(lexicon: Lexicon | Path | str, text: str) -> list[Hit]:
    """Hits of the lexicon's keys in ``text`` (see :meth:`Lexicon.find`)."""
    if not isinstance(lexicon, Lexicon):
        lexicon = load_lexicon(lexicon)
    return lexicon.find(text)


@dataclass(frozen=True)
class AliasShare:
    """How many documents of a corpus one match key occurs in."""

    key: str
    aliases: tuple[tuple[str, str, str, str], ...]  # (topic, alias, language, kind)
    documents: int
    share: float
    flagged: bool

    @property
    def topics(self) -> tuple[str, ...]:
        return tuple(sorted({a[0] for a in self.aliases}))

    def to_dict(self) -> dict:
        return {
            "key": self.key,
            "topics": list(self.topics),
            "aliases": [
                {"topic": t, "alias": a, "language": lang, "kind": k}
                for t, a, lang, k in self.aliases
            ],
            "documents": self.documents,
            "share": round(self.share, 4),
            "flagged": self.flagged,
        }


@dataclass
class CorpusReport:
    """Per match key found in a corpus, the share of documents it occurs in."""

    folder: Path
    documents: int
    threshold: float
    keys: list[AliasShare] = field(default_factory=list)
    hits: int = 0

    @property
    def flagged(self) -> list[AliasShare]:
        return [k for k in self.keys if k.flagged]

    def to_dict(self) -> dict:
        return {
            "folder": str(self.folder),
            "documents": self.documents,
            "threshold": self.threshold,
            "hits": self.hits,
            "keys": [k.to_dict() for k in self.keys],
        }


def _read_text(path: Path) -> str:
    return read_text_file(path, "a corpus document", ProbeError)


def _documents(folder: Path) -> list[Path]:
    """The ``.txt`` files under ``folder``; a sub-folder that cannot be listed is an
    error, never silently skipped."""

    def fail(exc: OSError) -> None:
        raise file_error(exc.filename or folder, exc, "list", ProbeError)

    out = []
    for dirpath, _, filenames in os.walk(folder, onerror=fail):
        out.extend(Path(dirpath) / f for f in filenames if f.endswith(".txt"))
    return sorted(out)


def probe_corpus(
    lexicon: Lexicon | Path | str,
    folder: Path | str,
    threshold: float = DEFAULT_THRESHOLD,
) -> CorpusReport:
    """Share of the ``.txt`` documents under ``folder`` in which each key occurs.

    Keys in more than ``threshold`` of the documents are flagged. Sorted by
    share (highest first), then key.
    """
    if not isinstance(lexicon, Lexicon):
        lexicon = load_lexicon(lexicon)
    folder = Path(folder)
    if not folder.is_dir():
        raise ProbeError(f"{folder}: not a folder of .txt documents")
    if not 0 < threshold <= 1:
        raise ArgumentError("threshold", f"must be a share between 0 and 1, not {threshold}")
    files = _documents(folder)
    if not files:
        raise ProbeError(f"{folder}: no .txt documents in this folder")
    seen: dict[str, int] = {}
    hits = 0
    for path in files:
        found = lexicon.find(_read_text(path))
        hits += len(found)
        for key in {h.key for h in found}:
            seen[key] = seen.get(key, 0) + 1
    shares = []
    for key, count in seen.items():
        share = count / len(files)
        rows = lexicon.by_key[key]
        shares.append(
            AliasShare(
                key=key,
                aliases=tuple(sorted({(r.topic, r.alias, r.language, r.kind) for r in rows})),
                documents=count,
                share=share,
                flagged=share > threshold,
            )
        )
    shares.sort(key=lambda a: (-a.documents, a.key))
    return CorpusReport(folder, len(files), threshold, shares, hits)


def curation_edits_for(
    report: CorpusReport | Iterable[AliasShare], note: str | None = None
) -> tuple[list[dict], list[tuple[str, str, str, str]]]:
    """Curation edits that remove the flagged aliases, in the curation overlay's format.

    Returns ``(edits, skipped)``. Each edit is plain data such as
    ``{"remove_alias": {"topic": t, "alias": a, "language": "en"}, "note": "..."}``.
    A flagged key that is a *preferred label* cannot be removed as an alias:
    those entries come back in ``skipped`` (relabel or exclude them by hand).
    """
    shares = report.flagged if isinstance(report, CorpusReport) else list(report)
    edits, skipped = [], []
    for share in shares:
        for topic, alias, language, kind in share.aliases:
            if kind != "alias":
                skipped.append((topic, alias, language, kind))
                continue
            edits.append(
                {
                    "remove_alias": {"topic": topic, "alias": alias, "language": language},
                    "note": note
                    or f"found in {share.documents} of the probed documents "
                    f"({share.share:.0%}): too common to tag with",
                }
            )
    return edits, skipped


def write_curation_edits(edits: list[dict], path: Path | str) -> Path:
    """Write ``edits`` as a curation overlay file (validated by the compiler's own reader)."""
    from kgkit.vocab.curation import load_curation  # the format has one home: the compiler

    path = Path(path)
    text = "# Curation edits written by `kgkit probe --corpus`; merge them into\n"
    text += "# vocab/<name>.curation.yaml (or use this file as the curation file).\n"
    text += yaml.safe_dump({"edits": edits}, allow_unicode=True, sort_keys=False, width=100)
    write_text_atomic(path, text, "curation file", check=load_curation)
    return path

"""The worklist of shared names: which names of a vocabulary several topics share.

A name (a match key of the lexicon) that several topics share makes an annotator
choose, every time it occurs. The worklist lists every shared key of a build or
release, the riskiest first, each with its candidates (topic, label, parents), so
the owner can settle it with one curation edit (``settle: {name, keep}``).

Riskiest first means, in this order: more topics share it; it is someone's
preferred label (an annotator sees it as the topic's own name); it is more
frequent in general use (wordfreq's Zipf scale, see :mod:`kgkit.vocab.frequency`);
it occurs in more documents of a corpus, when one is given. Keys the curation has
settled come last. Keys the ambiguity policy took out of the lexicon (listed in
``report.json``) are listed too, marked as not in the lexicon: the topics lost
those names, and settling gives them back to the chosen ones.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from kgkit.probe import Candidate, Lexicon, load_lexicon, probe_corpus
from kgkit.vocab.aliases import match_key
from kgkit.vocab.folder import read_report
from kgkit.vocab.frequency import zipf
from kgkit.vocab.model import LexiconRow

__all__ = ["SharedName", "list_shared_names"]


@dataclass(frozen=True)
class SharedName:
    """One match key several topics share, with what makes it risky."""

    key: str
    topics: tuple[str, ...]
    preferred_by: tuple[str, ...]  # topics whose preferred label it is
    zipf: float | None  # the highest frequency of its names, None when unrated
    in_lexicon: bool  # False: the ambiguity policy took it out of the lexicon
    action: str  # what the compile did with it (report.json "ambiguous"), or "kept"
    names: tuple[tuple[str, str, str, str], ...]  # (topic, alias, language, kind)
    candidates: tuple[Candidate, ...]
    documents: int | None = None  # with a corpus: documents it occurs in
    share: float | None = None

    @property
    def is_settled(self) -> bool:
        return self.action == "settled-by-curation"

    def risk(self) -> tuple:
        """The sort key: riskiest first (see the module's docstring)."""
        return (
            self.is_settled,
            -len(self.topics),
            not self.preferred_by,
            -(self.zipf or 0.0),
            -(self.share or 0.0),
            self.key,
        )

    def to_dict(self) -> dict:
        return {
            "action": self.action,
            "candidates": [c.to_dict() for c in self.candidates],
            "documents": self.documents,
            "in_lexicon": self.in_lexicon,
            "key": self.key,
            "names": [
                {"alias": a, "kind": k, "language": lang, "topic": t}
                for t, a, lang, k in self.names
            ],
            "preferred_by": list(self.preferred_by),
            "share": None if self.share is None else round(self.share, 4),
            "topics": list(self.topics),
            "zipf": self.zipf,
        }


def list_shared_names(folder: Path | str, corpus: Path | str | None = None) -> list[SharedName]:
    """Every shared key of the build or release ``folder``, riskiest first.

    Reads ``lexicon.tsv``, ``topics.jsonl`` and ``report.json``. With ``corpus``
    (a folder of ``.txt`` documents, as for ``probe_corpus``) each key gets the
    number and share of documents it occurs in, removed keys included.
    """
    lexicon = load_lexicon(folder)
    report = read_report(folder)
    by_key: dict[str, list[LexiconRow]] = {
        k: list(rows) for k, rows in lexicon.by_key.items() if len({r.topic for r in rows}) > 1
    }
    ambiguous = list(report.ambiguous) if report else []
    actions = {e["key"]: e.get("action", "kept") for e in ambiguous}
    dropped: dict[str, list[dict]] = {}
    for d in report.dropped_aliases if report else ():
        if d.get("reason") == "ambiguous":
            dropped.setdefault(match_key(d["alias"]), []).append(d)
    for entry in ambiguous:
        key = entry["key"]
        if key in by_key:
            continue
        rows = list(lexicon.by_key.get(key, ()))
        have = {(r.topic, r.alias, r.language) for r in rows}
        for topic in entry["topics"]:
            t = lexicon.topics.get(topic)
            for lang, text in (t.labels if t is not None else {}).items():
                if match_key(text) == key and (topic, text, lang) not in have:
                    rows.append(LexiconRow(text, key, topic, lang, "preferred", 0))
        for d in dropped.get(key, ()):
            kind = d.get("kind", "alias")
            rows.append(LexiconRow(d["alias"], key, d["topic"], d["language"], kind, 0))
        if len({r.topic for r in rows}) > 1:
            by_key[key] = rows

    shares: dict[str, tuple[int, float]] = {}
    if corpus is not None and by_key:
        every = Lexicon(
            lexicon.folder, [r for rows in by_key.values() for r in rows], lexicon.topics
        )
        for s in probe_corpus(every, corpus, threshold=1.0).keys:
            shares[s.key] = (s.documents, s.share)
    out = []
    whole = Lexicon(lexicon.folder, [r for rows in by_key.values() for r in rows], lexicon.topics)
    for key, rows in by_key.items():
        topics = tuple(sorted({r.topic for r in rows}))
        preferred = []
        for topic in topics:
            t = lexicon.topics.get(topic)
            if t is not None and any(match_key(x) == key for x in t.labels.values()):
                preferred.append(topic)
        rated = [z for z in (zipf(r.alias, r.language) for r in rows) if z is not None]
        docs, share = shares.get(key, (0, 0.0)) if corpus is not None else (None, None)
        out.append(
            SharedName(
                key=key,
                topics=topics,
                preferred_by=tuple(preferred),
                zipf=max(rated) if rated else None,
                in_lexicon=key in lexicon.by_key,
                action=actions.get(key, "kept"),
                names=tuple(sorted({(r.topic, r.alias, r.language, r.kind) for r in rows})),
                candidates=whole.candidates(key),
                documents=docs,
                share=share,
            )
        )
    out.sort(key=SharedName.risk)
    return out

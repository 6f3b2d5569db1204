"""Slicing: which statements of a dump an import keeps.

A slice keeps a statement when its predicate is in the kept set (if one is given)
and, for a language-tagged literal object, when its tag matches one of the kept
language ranges. Untagged literals, IRIs and blank nodes always pass the language
test. Language matching is RFC 4647 "basic filtering": the range ``en`` matches
``en`` and ``en-GB`` but not ``eng``.
"""

from __future__ import annotations

from dataclasses import dataclass

import pyoxigraph as ox

__all__ = ["Slice", "language_matches"]


from kgkit.languages import language_matches  # noqa: E402 - re-exported, one home


@dataclass(frozen=True)
class Slice:
    """What an import keeps. ``None`` means no restriction on that axis."""

    predicates: frozenset[str] | None = None
    literal_languages: tuple[str, ...] | None = None
    #: only statements about these subjects (IRIs); used by ``kgkit slice --roots``
    subjects: frozenset[str] | None = None

    @property
    def is_everything(self) -> bool:
        return self.predicates is None and self.literal_languages is None and self.subjects is None

    def keeps(self, quad: ox.Quad | ox.Triple) -> bool:
        if self.predicates is not None and quad.predicate.value not in self.predicates:
            return False
        if self.subjects is not None and quad.subject.value not in self.subjects:
            return False
        if self.literal_languages is not None:
            obj = quad.object
            if isinstance(obj, ox.Literal):
                lang = obj.language
                if lang and not self._language_kept(lang):
                    return False
        return True

    def keeps_language(self, tag: str) -> bool:
        """Whether a literal with language tag ``tag`` passes the language test."""
        return self.literal_languages is None or self._language_kept(tag)

    def _language_kept(self, tag: str) -> bool:
        # tags repeat: remember the answer (a few hundred tags at most in a real dump)
        cache = self.__dict__.setdefault("_tags", {})
        kept = cache.get(tag)
        if kept is None:
            kept = cache[tag] = language_matches(tag, self.literal_languages)
        return kept

    def describe(self) -> str:
        parts = []
        if self.predicates is not None:
            parts.append(f"{len(self.predicates)} predicates")
        if self.literal_languages is not None:
            parts.append("literal languages " + ",".join(self.literal_languages))
        if self.subjects is not None:
            parts.append(f"{len(self.subjects)} subjects")
        return "; ".join(parts) or "everything"

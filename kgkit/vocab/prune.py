"""Pruning rules: which topics leave the vocabulary, each with its reason.

Every rule is opt-in. All rules judge the same state (the hierarchy after
selection, curation and repair), so the order they are listed in does not change
which topics go; a topic caught by several rules is reported with the first
reason in the order of :data:`REASONS`. Topics added by curation are exempt from
the rules that count graph statements (instances, popularity).
"""

from __future__ import annotations

from collections.abc import Mapping

from kgkit.vocab.hierarchy import Hierarchy, count_descendants
from kgkit.vocab.spec import PruneRules

__all__ = ["REASONS", "prune_topics"]

REASONS = (
    "stop-topic",
    "missing-language",
    "deeper-than-max-depth",
    "fewer-descendants-than-min",
    "fewer-instances-than-min",
    "below-min-popularity",
)


def prune_topics(
    kept: set[str],
    rules: PruneRules,
    hierarchy: Hierarchy | None,
    sources: Mapping[str, str | None],
    missing_language: Mapping[str, str],
    instances: Mapping[str, int],
    popularity: Mapping[str, float] | None,
) -> dict[str, str]:
    """topic -> reason, for each topic of ``kept`` a rule drops.

    ``sources``: topic -> source IRI (None for curation-added topics);
    ``missing_language``: topic -> first required language it lacks (only when the
    spec says drop); ``instances`` and ``popularity`` are keyed by source IRI.
    """
    stop = set(rules.stop_topics)
    descendants = (
        count_descendants(hierarchy.parents)
        if rules.min_descendants is not None and hierarchy is not None
        else {}
    )
    out = {}
    for t in sorted(kept):
        src = sources.get(t)
        reason = None
        if src is not None and src in stop:
            reason = "stop-topic"
        elif t in missing_language:
            reason = f"missing-language:{missing_language[t]}"
        elif (
            rules.max_depth is not None
            and hierarchy is not None
            and hierarchy.depth.get(t, 0) > rules.max_depth
        ):
            reason = "deeper-than-max-depth"
        elif rules.min_descendants is not None and descendants.get(t, 0) < rules.min_descendants:
            reason = "fewer-descendants-than-min"
        elif (
            rules.min_instances is not None
            and src is not None
            and instances.get(src, 0) < rules.min_instances
        ):
            reason = "fewer-instances-than-min"
        elif (
            rules.min_popularity is not None
            and src is not None
            and (popularity or {}).get(src, 0.0) < rules.min_popularity.min
        ):
            reason = "below-min-popularity"
        if reason:
            out[t] = reason
    return out

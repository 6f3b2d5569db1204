"""Releases of compiled vocabularies: versions, diffs, changelogs, manifests, checks."""

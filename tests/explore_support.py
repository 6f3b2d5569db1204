"""Support for the exploration tests (no tests here): a workspace with two small imported graphs."""

from __future__ import annotations

from pathlib import Path

from kgkit.ingest import ImportOptions, import_files
from kgkit.workspace import init_workspace

DATA = Path(__file__).resolve().parent / "data" / "explore-multi-parent-and-cycle"
T = "http://example.org/t/"


def make_explore_workspace(root: Path):
    """A workspace holding graph ``topics`` (hierarchy with a multi-parent node and a
    cycle) and graph ``other`` (one more topic), with prefix ``t:`` for the topics."""
    ws = init_workspace(root)
    text = (ws.root / "kgkit.yaml").read_text(encoding="utf-8")
    text = text.replace("prefixes:\n", f"prefixes:\n  t: {T}\n", 1)
    (ws.root / "kgkit.yaml").write_text(text, encoding="utf-8")
    from kgkit.workspace import load_workspace

    ws = load_workspace(ws.root)
    import_files(ws, [str(DATA / "topics.nt")], ImportOptions(graph="topics"))
    import_files(ws, [str(DATA / "other.nt")], ImportOptions(graph="other"))
    return ws

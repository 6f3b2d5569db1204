"""The demo: an invented knowledge graph of the Tidewell Media Cooperative, and a run of the job.

Everything in the demo data is invented: the cooperative, its towns, its people.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path

from kgkit.ingest import ImportOptions, import_files, make_slice
from kgkit.store import list_graphs, open_store
from kgkit.workspace import init_workspace

__all__ = ["DemoStep", "run_demo"]


@dataclass
class DemoStep:
    """One step of the demo run: what was done, and the files it left."""

    title: str
    lines: list[str] = field(default_factory=list)
    files: list[Path] = field(default_factory=list)


def run_demo(directory: Path) -> list[DemoStep]:
    """Build the demo workspace in ``directory`` and run the job on it."""
    directory = Path(directory)
    steps: list[DemoStep] = []
    ws = init_workspace(directory, languages=("en", "de"))
    steps.append(DemoStep("made the workspace", files=[ws.root / "kgkit.yaml", ws.store_path]))

    dumps = directory / "dumps"
    dumps.mkdir(exist_ok=True)
    core = dumps / "tidewell-core.nt"
    core.write_bytes(resources.files("kgkit.demo").joinpath("core.nt").read_bytes())
    rejects = dumps / "tidewell-core.rejects.txt"
    opts = ImportOptions(
        graph="tidewell",
        on_error="skip",
        rejects=rejects,
        slice=make_slice(ws, keep="profile", languages=["en", "de"]),
    )
    (summary,) = import_files(ws, [str(core)], opts)
    steps.append(
        DemoStep(
            "imported the dump, keeping profile predicates in English and German",
            [
                f"read {summary.read} = loaded {summary.loaded} + duplicates "
                f"{summary.duplicates} + filtered {summary.filtered} + rejected {summary.rejected}"
            ],
            [core, rejects],
        )
    )
    with open_store(ws.store_path) as store:
        graphs = list_graphs(store)
    steps.append(
        DemoStep(
            "listed the graphs",
            [
                f"{g.name}: {g.counts.get('loaded', 0)} statements from {g.files[0].name}"
                for g in graphs
            ],
        )
    )
    return steps

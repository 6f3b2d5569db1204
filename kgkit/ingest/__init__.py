"""Reading dumps into the store: formats, decompression, slicing, rejects, provenance."""

from kgkit.ingest.formats import FORMATS, detect_format
from kgkit.ingest.loader import (
    ImportOptions,
    ImportSummary,
    Progress,
    graph_name_for,
    import_files,
    import_into_store,
    make_slice,
)
from kgkit.ingest.slicing import Slice

__all__ = [
    "FORMATS",
    "ImportOptions",
    "ImportSummary",
    "Progress",
    "Slice",
    "detect_format",
    "graph_name_for",
    "import_files",
    "import_into_store",
    "make_slice",
]

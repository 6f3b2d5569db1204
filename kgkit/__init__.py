"""kgkit: a local knowledge-graph toolkit for building topic vocabularies."""

__version__ = "0.1.0"

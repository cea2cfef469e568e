"""trawl: evaluate embedding-based search over a mixed catalogue without labelled queries."""

__version__ = "0.1.0"

"""On-disk index: manifest, vectors, id order, embedding cache, staleness checks, search.

An index folder holds ``manifest.json`` (what was built, from what, with which library
versions), ``ids.txt`` (one item id per line, catalogue order) and either the vector
store's files (``vectors.npy`` for fp32; int8 and binary stores in ``trawl.stores``),
an HNSW graph holding its own copy of the vectors (``hnsw.faiss``) or a ``bm25/``
folder. Everything except the manifest's ``build`` section is a pure function of the
inputs, so rebuilding gives byte-identical files.

``build`` writes folders, ``manifest`` describes and reads them, ``search`` opens and
searches them; the names below are the package's public face.
"""

from .build import DEFAULT_BATCH_SIZE, HnswParams, build_index, check_store
from .manifest import ANN_KINDS, IndexInfo, read_manifest
from .search import Index, open_index, open_recorded, retrieve

__all__ = ["ANN_KINDS", "DEFAULT_BATCH_SIZE", "HnswParams", "Index", "IndexInfo", "build_index",
           "check_store", "open_index", "open_recorded", "read_manifest", "retrieve"]

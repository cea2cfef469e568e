"""Opening an index for search (refusing a stale catalogue or another encoder), searching
it, and ``retrieve``: build-if-needed and search in one call.
"""

from __future__ import annotations

import hashlib
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np

from ..catalogue import Catalogue, load_catalogue
from ..embedcache import default_cache_dir
from ..errors import EncoderMismatchError, InputError, StaleIndexError, UsageError
from ..progress import progress
from ..ranking import id_ranks, top_k
from ..retrievers.loading import EncoderLoader, default_loader
from ..retrievers.spec import EncoderSpec, as_spec, parse_spec
from ..runs import Run
from ..stores import StoreSettings, load_store, store_settings_from
from .build import build_index, swap_lock
from .manifest import HNSW_FILE, IDS, LEXICAL_DIR, IndexInfo, folder_bytes, \
    info_from_manifest, lexical_recipe, read_manifest

QUERY_BATCH = 64    # queries encoded together by Index.search


REBUILD = "trawl index {cat} -e {spec} -o {out}"


def open_index(out_dir: str | Path, catalogue: Catalogue | None = None,
               spec: EncoderSpec | str | None = None, *,
               loader: EncoderLoader | None = None, store: StoreSettings | None = None) -> Index:
    """Open an index for search, refusing a changed catalogue, a different encoder
    (``spec``: parsed already, or a spec string parsed here) or, when ``store`` is given,
    vectors kept another way. Opening waits while a
    rebuild swaps the folder, so every file comes from one build (``build.swap_lock``)."""
    folder = Path(out_dir)
    with swap_lock(folder, shared=True):
        return _open(folder, catalogue, spec, loader, store)


def _open(folder: Path, catalogue: Catalogue | None, spec: EncoderSpec | str | None,
          loader: EncoderLoader | None, store: StoreSettings | None = None) -> Index:
    manifest = read_manifest(folder)
    recorded = manifest["encoder"]["spec"]  # canonical: equal strings are equal specs
    wanted = as_spec(spec, check_paths=False) if spec is not None else None
    built = wanted if wanted is not None and str(wanted) == recorded else \
        parse_spec(recorded, check_paths=False)
    _refuse_other_store(folder, manifest, store)
    if wanted is not None and wanted != built:
        raise EncoderMismatchError(
            f"index {folder} was built with encoder {built}, not {wanted}; search it as "
            f"{built}, or build one for {wanted}: "
            + REBUILD.format(cat=manifest["catalogue"]["path"], spec=wanted, out=folder))
    if catalogue is not None:
        _refuse_stale(folder, manifest, catalogue, built)
    if built.lexical:
        _refuse_other_tokens(folder, manifest, built)
    return Index(folder, manifest, built, loader or default_loader())


def open_recorded(out_dir: str | Path, catalogue: str | Path | None = None
                  ) -> tuple[Index, str | None]:
    """Open an index checked against ``catalogue`` or, by default, the catalogue file it
    was built from. The second value is that recorded path when the file is gone and the
    index could not be checked (None otherwise)."""
    manifest = read_manifest(out_dir)
    recorded = manifest["catalogue"]["path"]
    path = catalogue or (recorded if Path(recorded).is_file() else None)
    cat = load_catalogue(path, manifest["catalogue"]["template"]) if path else None
    return open_index(out_dir, cat), None if path else recorded


def _refuse_other_store(folder: Path, manifest: Mapping[str, Any],
                        wanted: StoreSettings | None) -> None:
    """Raise when the index keeps its vectors another way than ``wanted``."""
    if wanted is None or manifest["encoder"]["dim"] == 0:
        return
    kept = store_settings_from(manifest.get("store"))
    if kept != wanted:
        fix = REBUILD.format(cat=manifest["catalogue"]["path"], spec=manifest["encoder"]["spec"],
                             out=folder)
        raise StaleIndexError(
            f"index {folder} keeps {kept.label} vectors, not {wanted.label}; search it with "
            f"store {kept.kind!r}, or rebuild it: `{fix} --store {wanted.kind}`")


def _refuse_stale(folder: Path, manifest: Mapping[str, Any], catalogue: Catalogue,
                  built: EncoderSpec) -> None:
    """Raise when the catalogue or its template changed since the index was built."""
    was = manifest["catalogue"]
    fix = REBUILD.format(cat=catalogue.path, spec=built, out=folder)
    if catalogue.fingerprint != was["fingerprint"]:
        raise StaleIndexError(
            f"index {folder} is stale: {catalogue.path} has changed since it was built "
            f"(catalogue fingerprint {was['fingerprint']} -> {catalogue.fingerprint}, "
            f"{was['items']} -> {len(catalogue)} items); update it with `{fix}` "
            "(only changed items are re-embedded)")
    if catalogue.template.pattern != was["template"]:
        raise StaleIndexError(
            f"index {folder} embeds items with template {was['template']!r}, not "
            f"{catalogue.template.pattern!r}; rebuild it with `{fix} --template ...` or "
            "use the template it was built with")


def _refuse_other_tokens(folder: Path, manifest: Mapping[str, Any], built: EncoderSpec) -> None:
    """Raise when a lexical index was tokenised by another recipe (another version of trawl,
    bm25s or PyStemmer): its terms would not meet this version's query terms."""
    was, now = manifest["encoder"]["fingerprint"], lexical_recipe(built)
    if was != now:
        fix = REBUILD.format(cat=manifest["catalogue"]["path"], spec=built, out=folder)
        raise StaleIndexError(
            f"index {folder} was tokenised by another version of trawl or of its tokeniser "
            f"libraries (recipe {was}, now {now}), so its terms may not match the queries'; "
            f"rebuild it with `{fix}`")


def check_depth(k: int, items: int, holder: str) -> None:
    """Refuse ``k`` results per query below 1 or above the ``items`` that ``holder``
    (an index, a catalogue) has, rather than cut the request without a word."""
    if k < 1:
        raise UsageError(f"k={k} must be >= 1")
    if k > items:
        raise UsageError(f"{k} results per query asked for, but {holder} holds {items} "
                         f"items; ask for at most {items}")


class Index:
    """A loaded index: answers batches of queries (``search``) or one at a time (``search_one``)."""

    def __init__(self, folder: Path, manifest: dict[str, Any], spec: EncoderSpec,
                 loader: EncoderLoader) -> None:
        self.path = folder
        self.manifest = manifest
        self.spec = spec  # as parsed from the manifest
        self._loader = loader
        self.ids = (folder / IDS).read_text(encoding="utf-8").split("\n")[:-1]
        if len(self.ids) != manifest["catalogue"]["items"]:
            raise InputError(folder / IDS, f"holds {len(self.ids)} ids but the manifest says "
                             f"{manifest['catalogue']['items']}; rebuild the index")
        self._ranks = id_ranks(self.ids)
        self._encoder = None
        self._bytes = folder_bytes(folder)  # now: the folder may be rebuilt while in use
        if self.spec.lexical:
            from ..retrievers.lexical import LexicalIndex

            self._lexical = LexicalIndex.load(folder / LEXICAL_DIR, spec)
        else:
            self._faiss = self._load_faiss()

    @property
    def info(self) -> IndexInfo:
        return info_from_manifest(self.path, self.manifest)

    def __len__(self) -> int:
        return len(self.ids)

    @property
    def bytes(self) -> int:
        return self._bytes

    def _load_faiss(self):
        import faiss

        search = self.manifest["search"]
        if search["ann"] == "hnsw":
            index = faiss.read_index(str(self.path / HNSW_FILE))
            index.hnsw.efSearch = int(search["ef_search"])
            return index
        return load_store(self.path, self.manifest.get("store"))

    def encoder(self):
        """The query encoder, checked against the weights the index was built with."""
        if self._encoder is None:
            encoder = self._loader.encoder(self.spec)
            built = self.manifest["encoder"]["fingerprint"]
            if encoder.fingerprint != built:
                raise EncoderMismatchError(
                    f"the model files of encoder {self.spec} have changed since index "
                    f"{self.path} was built (fingerprint {built} -> {encoder.fingerprint}); "
                    f"rebuild it: trawl index {self.manifest['catalogue']['path']} "
                    f"-e {self.spec} -o {self.path}")
            export = (self.manifest["encoder"].get("runtime") or {}).get("export")
            if export and hasattr(encoder, "use_export"):
                encoder.use_export(export)  # the ONNX export the build used, if still there
            self._encoder = encoder
        return self._encoder

    def check_k(self, k: int) -> None:
        check_depth(k, len(self.ids), f"index {self.path}")

    def search(self, queries: Mapping[str, str], k: int = 100, quiet: bool = False,
               name: str | None = None) -> Run:
        """Top-``k`` items per query, in trec_eval order, as a Run named after the index."""
        self.check_k(k)
        qids = list(queries)
        results: dict[str, tuple[tuple[str, float], ...]] = {}
        with progress(len(qids), "searching", quiet, unit="query") as bar:
            for s in range(0, len(qids), QUERY_BATCH):
                chunk = qids[s:s + QUERY_BATCH]
                for qid, ranked in zip(chunk, self._rank([queries[q] for q in chunk], k)):
                    results[qid] = ranked
                bar.update(len(chunk))
        return Run(name or self.path.name, results)

    def search_one(self, text: str, k: int = 100) -> tuple[tuple[str, float], ...]:
        """One query, the way a search box asks: encode it and search."""
        return self._rank([text], k)[0]

    def _rank(self, texts: list[str], k: int) -> list[tuple[tuple[str, float], ...]]:
        if self.spec.lexical:
            return [self._pairs(p, s) for p, s in self._lexical.matches(texts, k, self._ranks)]
        vectors = self.encoder().encode_queries(texts, QUERY_BATCH)
        n = len(self.ids)
        depth = min(n, k + 1)  # one extra reveals a tie across the cut-off
        scores, found = self._faiss.search(vectors, depth)
        out = []
        for q, (row, pos) in enumerate(zip(scores, found)):
            if depth > k and row[k] == row[k - 1] and self.manifest["search"]["ann"] == "exact":
                row, pos = self._faiss.search(vectors[q:q + 1], n)
                row, pos = row[0], pos[0]
            valid = pos >= 0
            pick = top_k(row[valid], k, self._ranks, candidates=pos[valid])
            order = {p: s for p, s in zip(pos[valid].tolist(), row[valid].tolist())}
            out.append(tuple((self.ids[p], order[p]) for p in pick.tolist()))
        return out

    def _pairs(self, positions: np.ndarray, scores: np.ndarray) -> tuple[tuple[str, float], ...]:
        return tuple((self.ids[p], s) for p, s in zip(positions.tolist(), scores.tolist()))

def retrieve(catalogue: Catalogue, spec: EncoderSpec | str, queries: Mapping[str, str],
             k: int = 100, cache_dir: str | Path | None = None, quiet: bool = True, *,
             name: str | None = None, loader: EncoderLoader | None = None) -> Run:
    """Search ``catalogue`` with encoder ``spec`` in one call, building an index if needed.

    Indexes live under ``CACHE/indexes/`` keyed by catalogue, template and spec; vectors
    come from the embedding cache and models stay loaded in ``loader`` (default: the
    per-process one), so repeated calls cost only the search. ``k`` is capped at the
    catalogue size. The run is named after the spec unless ``name`` is given.
    """
    enc_spec = as_spec(spec)
    index = cached_index(catalogue, enc_spec, cache_dir, quiet, loader=loader)
    run_name = name or "_".join(str(enc_spec).split())
    return index.search(queries, min(k, len(catalogue)), quiet=quiet, name=run_name)


def cached_index(catalogue: Catalogue, spec: EncoderSpec | str,
                 cache_dir: str | Path | None = None, quiet: bool = True, *,
                 loader: EncoderLoader | None = None) -> Index:
    """The index ``retrieve`` searches, built under ``CACHE/indexes/`` when missing."""
    enc_spec = as_spec(spec)
    root = Path(cache_dir) if cache_dir is not None else default_cache_dir()
    key = hashlib.sha256("\0".join([catalogue.fingerprint, catalogue.template.pattern,
                                    str(enc_spec)]).encode()).hexdigest()[:16]
    folder = root / "indexes" / key
    loader = loader or default_loader()
    try:
        index = open_index(folder, catalogue, enc_spec, loader=loader)
        if not enc_spec.lexical:
            index.encoder()
    except (InputError, StaleIndexError, EncoderMismatchError):
        build_index(catalogue, enc_spec, folder, cache_dir=root, quiet=quiet, loader=loader)
        index = open_index(folder, catalogue, enc_spec, loader=loader)
    return index

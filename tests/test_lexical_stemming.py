"""bm25;stem=english: other word forms meet, and a cached index tokenised another way is
never searched with this version's query terms."""

from __future__ import annotations

import json

import pytest

from trawl.catalogue import Catalogue, Item
from trawl.errors import StaleIndexError, UsageError
from trawl.index import build_index, open_index
from trawl.index.manifest import MANIFEST
from trawl.index.search import cached_index
from trawl.retrievers.lexical import LexicalIndex, tokenise
from trawl.retrievers.spec import parse_spec

TITLES = ["Profile", "Security settings", "Cancel a standing order", "Standing orders",
          "Export transactions", "Paying in cheques"]


def catalogue() -> Catalogue:
    return Catalogue("bank.jsonl", tuple(Item(f"s{i}", "screen", t) for i, t in enumerate(TITLES)))


def test_stem_option_is_canonical_and_refuses_other_values():
    spec = parse_spec("bm25; stem = English")
    assert (spec.stem, str(spec)) == ("english", "bm25;stem=english")
    assert parse_spec(str(spec)) == spec
    assert parse_spec("bm25;stem=none") == parse_spec("bm25")
    assert "stem" not in parse_spec("bm25").as_dict()  # unstemmed manifests read as before
    with pytest.raises(UsageError, match="stem='porter2' is not one of none, english"):
        parse_spec("bm25;stem=porter2")


def test_english_stemming_follows_snowball_sample_vocabulary():
    # Source: the Snowball English (Porter2) stemmer's sample vocabulary and output,
    # snowballstem.org/algorithms/english/stemmer.html (from memory).
    words = "consign consigned consigning consignment consist consisted consistency " \
            "consistent consistently"
    assert tokenise([words], "english") == [["consign"] * 4 + ["consist"] * 5]
    assert tokenise([words]) == [words.split()]  # off by default


def test_stemmed_bm25_matches_other_word_forms_unstemmed_does_not():
    cat = catalogue()
    plain = LexicalIndex.build(cat.texts(), parse_spec("bm25"))
    stemmed = LexicalIndex.build(cat.texts(), parse_spec("bm25;stem=english"))
    queries = ["profiles", "cancel standing orders", "cheque paid in"]
    assert not plain.scores(queries[:1]).any()
    best = stemmed.scores(queries).argmax(axis=1)
    assert [cat.ids[p] for p in best] == ["s0", "s2", "s5"]


def _tamper(folder, fingerprint="0" * 16):
    manifest = json.loads((folder / MANIFEST).read_text())
    manifest["encoder"]["fingerprint"] = fingerprint
    (folder / MANIFEST).write_text(json.dumps(manifest))


def test_index_tokenised_by_another_recipe_is_refused_and_cache_rebuilds_it(tmp_path):
    cat = catalogue()
    spec = parse_spec("bm25;stem=english")
    folder = tmp_path / "idx"
    build_index(cat, spec, folder, quiet=True)
    good = json.loads((folder / MANIFEST).read_text())["encoder"]["fingerprint"]
    _tamper(folder)
    with pytest.raises(StaleIndexError, match="tokenised by another version.*rebuild it with "
                       "`trawl index \\S*bank.jsonl -e bm25;stem=english -o "):
        open_index(folder, cat, spec)

    cache = tmp_path / "cache"
    first = cached_index(cat, spec, cache)
    _tamper(first.path)
    again = cached_index(cat, spec, cache)  # rebuilt, not searched with other terms
    assert again.manifest["encoder"]["fingerprint"] == good
    run = again.search({"q": "profiles"}, k=1, quiet=True)
    assert [doc for doc, _ in run.results["q"]] == ["s0"]

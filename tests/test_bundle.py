"""The results bundle: a real ``results.json`` fits the schema derived from the typed
bundle, reads back into it and writes out byte for byte the same."""

from __future__ import annotations

import copy
import json
from pathlib import Path

import pytest

from trawl.errors import InputError
from trawl.pipeline import JudgmentSet, Results, evaluate, results_schema

from .test_pipeline import write_library

# Reference: the jsonschema library (PyPI), which implements the JSON Schema 2020-12
# specification; the schema itself is checked against the draft's meta-schema first.
jsonschema = pytest.importorskip("jsonschema")

SILVER = [("s1", "renewing loans", "art-renew", "keyword"),
          ("s2", "where do i pay fees, mail ann.lee@example.org", "art-fines", "question"),
          ("s3", "misplaced membership card", "faq-lost-card", "paraphrase")]


def write_silver_set(folder: Path) -> Path:
    """A silver set as synth lays it out: queries, qrels and the provenance sidecar."""
    prefix = folder / "lib-silver"
    Path(f"{prefix}.queries.tsv").write_text(
        "".join(f"{q}\t{text}\n" for q, text, _, _ in SILVER), encoding="utf-8")
    Path(f"{prefix}.qrels").write_text(
        "".join(f"{q} 0 {item} 2\n" for q, _, item, _ in SILVER), encoding="utf-8")
    Path(f"{prefix}.jsonl").write_text(
        "".join(json.dumps({"qid": q, "text": text, "source": item, "style": style, "seed": 3})
                + "\n" for q, text, item, style in SILVER), encoding="utf-8")
    return prefix


@pytest.fixture(scope="module")
def written(tmp_path_factory) -> Path:
    """results.json of an evaluation using every optional part of the format: a fusion,
    a silver and a human set, agreement between them, scrubbed query text."""
    folder = tmp_path_factory.mktemp("bundle")
    cat, queries, qrels = write_library(folder / "data")
    prefix = write_silver_set(folder / "data")
    sets = [JudgmentSet("people", queries, qrels, "people's set", silver=False),
            JudgmentSet("silver", Path(f"{prefix}.queries.tsv"), Path(f"{prefix}.qrels"))]
    evaluate(cat, sets, ["bm25", "strict=bm25;k1=0.9;b=0.4"], folder / "out",
             fuse=["bm25+strict"], resamples=200, agreement=("people", "silver"),
             scrub_queries=True, cache_dir=folder / "cache", quiet=True)
    return folder / "out" / "results.json"


def validator():
    schema = results_schema()
    jsonschema.Draft202012Validator.check_schema(schema)
    return jsonschema.Draft202012Validator(schema)


def test_results_json_validates_against_the_schema(written):
    bundle = json.loads(written.read_text(encoding="utf-8"))
    assert bundle["agreement"] is not None and "scrubbed" in bundle["setup"]
    assert [e["silver"] for e in bundle["evaluations"]] == [False, True]
    errors = [e.message for e in validator().iter_errors(bundle)]
    assert errors == []


def test_results_json_round_trips_through_the_dataclasses(written):
    text = written.read_text(encoding="utf-8")
    results = Results.from_dict(json.loads(text))
    assert results.evaluations[1].how.startswith("synthesised from the catalogue by trawl synth")
    again = json.dumps(results.as_dict(), indent=2, ensure_ascii=False) + "\n"
    assert again == text


@pytest.mark.parametrize("path", [
    ("evaluations", 0, "latency", "bm25", "mean_ms"),
    ("evaluations", 0, "misses", 0, "rows", 0, "not_found"),
    ("evaluations", 0, "misses", 0, "rows", 0, "lost"),
    ("evaluations", 1, "judged_by"),
    ("agreement", "tau", "low"),
])
def test_a_missing_field_fails_schema_and_reader(written, path):
    bundle = json.loads(written.read_text(encoding="utf-8"))
    broken = copy.deepcopy(bundle)
    parent = broken
    for key in path[:-1]:
        parent = parent[key]
    del parent[path[-1]]
    assert not validator().is_valid(broken)
    where = "".join(f"[{p}]" if isinstance(p, int) else f".{p}" for p in path).lstrip(".")
    with pytest.raises(InputError) as raised:
        Results.from_dict(broken)
    assert str(raised.value) == f"results.json: {where}: missing"


def test_an_unknown_field_or_wrong_type_fails_schema_and_reader(written):
    bundle = json.loads(written.read_text(encoding="utf-8"))
    extra = copy.deepcopy(bundle)
    extra["systems"][0]["colour"] = "red"
    assert not validator().is_valid(extra)
    with pytest.raises(InputError, match=r"systems\[0\]: unknown field 'colour'"):
        Results.from_dict(extra)
    wrong = copy.deepcopy(bundle)
    wrong["evaluations"][0]["queries"] = "16"
    assert not validator().is_valid(wrong)
    with pytest.raises(InputError, match=r"evaluations\[0\]\.queries: expected integer"):
        Results.from_dict(wrong)
    other = copy.deepcopy(bundle)
    other["format"] = "trawl-results/2"
    assert not validator().is_valid(other)
    with pytest.raises(InputError, match="format: expected 'trawl-results/1'"):
        Results.from_dict(other)

"""The results bundle: everything ``results.json`` holds, as typed frozen dataclasses.

The report, the terminal summary and ``--json`` all render this one bundle, so every
figure shown can be checked against ``results.json``. The dataclasses below are the
format's definition: ``as_dict`` writes the JSON (keys in field order), ``from_dict``
reads it back refusing unknown or missing fields, and ``results_schema`` derives a JSON
Schema (draft 2020-12) from the same fields, so the schema cannot drift from the code.
"""

from __future__ import annotations

import dataclasses
import types
import typing
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from ..decision import Decision
from ..errors import InputError

FORMAT = "trawl-results/1"
SCHEMA_DRAFT = "https://json-schema.org/draft/2020-12/schema"


def _doc(text: str, default: Any = dataclasses.MISSING, **extra: Any) -> Any:
    """A field with a description for the schema (and ``omit_none``/``const`` rules)."""
    return field(default=default, metadata={"doc": text, **extra})


# --- setup and systems ------------------------------------------------------------------------

@dataclass(frozen=True)
class CatalogueInfo:
    """The catalogue evaluated."""

    path: str
    fingerprint: str
    items: int
    types: Mapping[str, int] = _doc("destination type -> number of items")


@dataclass(frozen=True)
class Setup:
    """How the evaluation was run."""

    catalogue: CatalogueInfo
    metrics: tuple[str, ...]
    primary: str = _doc("the metric charted and summarised")
    depth: int = _doc("results kept per query")
    resamples: int = _doc("bootstrap resamples and random sign flips")
    seed: int
    alpha: float = _doc("significance level; intervals are at 1 - alpha")
    notes: Mapping[str, str] = _doc("label -> a sentence about how something was done")
    versions: Mapping[str, str] = _doc("package -> version")
    scrubbed: Mapping[str, int] | None = _doc(
        "kind of personal data -> occurrences scrubbed from the query text shown; present "
        "only when the query text was scrubbed", omit_none=True, default=None)


@dataclass(frozen=True)
class SystemInfo:
    """One evaluated system: an encoder's index or a fusion of other systems."""

    name: str
    spec: str = _doc("canonical encoder spec, or rrf(PARTS; k=K) for a fusion")
    kind: str = _doc("encoder kind, 'lexical' or 'fused'")
    fingerprint: str | None = _doc("encoder weights fingerprint; None for a fusion")
    dimensions: int | None = _doc("vector size; None for lexical and fused systems")
    index_bytes: int = _doc("bytes on disk (a fusion: its parts' added up)")
    bytes_per_item: float
    quantised: str = _doc("what runs or is kept as int8 or bits: 'none', 'model' (its weights; "
                          "the vectors stay fp32, so the index keeps its size), 'vectors' (the "
                          "index's), 'model and vectors', or 'parts' for a fusion",
                          default="none")
    store: str | None = _doc("how the index keeps vectors: fp32, int8, binary+int8 or "
                             "binary+fp32; None for lexical and fused systems", default=None)
    vector_bytes: int | None = _doc("bytes of the vectors (codes) searched; None for lexical "
                                    "and fused systems", default=None)


# --- one judgment set -------------------------------------------------------------------------

@dataclass(frozen=True)
class Latency:
    """Per-query latency (ms, one query at a time) and batch throughput of a system."""

    p50_ms: float | None
    p95_ms: float | None
    p99_ms: float | None
    mean_ms: float | None
    queries_per_s: float | None = _doc("whole query set in one call; a fusion: its parts' "
                                       "batch times added up")
    threads: int | None = _doc("compute threads while timing single queries", default=None)
    load: float | None = _doc("highest 1-minute load average seen before or after timing",
                              default=None)
    busy: bool | None = _doc("load above the cores while timing: the latency is inflated by "
                             "waiting for a core", default=None)


@dataclass(frozen=True)
class ScoreRow:
    """Mean of one metric for one run over all queries (type None) or one type's."""

    run: str
    metric: str
    type: str | None
    n: int = _doc("queries averaged")
    mean: float
    low: float | None = _doc("bootstrap interval at 1 - alpha")
    high: float | None
    note: str | None = _doc("why an interval asked for is missing (too few queries)")


@dataclass(frozen=True)
class ComparisonRow:
    """A run against the baseline on one metric and group (None when not computable)."""

    run: str
    baseline: str
    metric: str
    type: str | None
    n: int
    run_mean: float | None
    baseline_mean: float | None
    diff: float | None = _doc("run - baseline")
    low: float | None
    high: float | None
    p_bootstrap: float | None
    p_randomisation: float | None
    p_corrected: float | None = _doc("Holm-corrected p-value within its family (see "
                                     "``family`` and ``corrected``)")
    effect: float | None
    note: str | None = _doc("why the interval and bootstrap p-value are missing")
    family: str = _doc("the Holm family of p_corrected: 'headline' (every run vs the "
                       "baseline on the first metric over all queries) or 'exploratory' "
                       "(one metric on one group, corrected only within itself)")


@dataclass(frozen=True)
class MissRow:
    """How one run does on the queries of one destination type."""

    type: str
    queries: int
    hit_at_1: float
    hit_at_k: float
    misses: int
    median_rank: float | None = _doc("None when most queries retrieve no relevant item")
    not_found: int = _doc("queries with no relevant item anywhere in the run")
    lost: int = _doc("queries whose rank-1 item is not relevant")
    lost_to: Mapping[str, float] = _doc("type of the rank-1 item -> share of lost")


@dataclass(frozen=True)
class MissTable:
    """One run's miss table."""

    run: str
    k: int
    rows: tuple[MissRow, ...]


@dataclass(frozen=True)
class ItemRef:
    """An item as a person needs to see it in a table."""

    id: str
    type: str
    title: str
    snippet: str


@dataclass(frozen=True)
class WorstQuery:
    """A query the baseline serves badly: what was wanted and what came first."""

    type: str
    qid: str
    query: str = _doc("query text as shown (scrubbed when asked)")
    rank: int | None = _doc("rank of the wanted item; None when not retrieved")
    wanted: ItemRef
    winner: ItemRef | None = _doc("the rank-1 item; None when nothing was retrieved")


@dataclass(frozen=True)
class Worst:
    """The baseline's worst queries."""

    run: str
    depth: int = _doc("longest ranking in the run: 'not retrieved' means not in this many")
    queries: tuple[WorstQuery, ...]


@dataclass(frozen=True)
class Evaluation:
    """Every figure for one judgment set."""

    name: str
    label: str
    silver: bool = _doc("machine-made judgments: every figure is an estimate")
    origin: str = _doc("who made the judgments: 'silver' (synthesis provenance beside the "
                       "qrels, or declared), 'human' (declared by the user) or 'unknown'")
    how: str = _doc("how the judgments were made")
    queries_file: str
    qrels_file: str
    queries: int = _doc("judged queries")
    judgments: int
    baseline: str
    latency: Mapping[str, Latency] = _doc("system -> latency")
    scores: tuple[ScoreRow, ...]
    comparison: tuple[ComparisonRow, ...] = _doc("empty with a single system")
    corrected: str = _doc("'bootstrap' or 'randomisation': the p-values Holm's correction "
                          "was applied to; empty without comparisons")
    misses: tuple[MissTable, ...]
    miss_headline: str
    worst: Worst
    type_rule: str = _doc("how a query's destination type is decided")
    warnings: tuple[str, ...]
    judged_by: str = _doc("who made the judgments; for silver sets, that figures are "
                          "estimates, with the measured agreement when known")


# --- agreement and the whole bundle -----------------------------------------------------------

@dataclass(frozen=True)
class Correlation:
    """A rank correlation with its bootstrap interval (None when not computable)."""

    value: float | None
    low: float | None
    high: float | None


@dataclass(frozen=True)
class RankedSystem:
    """A system's score and rank under both judgment sets."""

    run: str
    score_a: float
    score_b: float
    rank_a: float
    rank_b: float


@dataclass(frozen=True)
class Flip:
    """Two systems ordered one way under set A and the other way under set B."""

    first: str = _doc("better under A")
    second: str
    diff_a: float
    diff_b: float
    held_a: float | None = _doc("share of bootstrap replicates in which A keeps first "
                                "ahead; absent without an interval", omit_none=True,
                                default=None)
    held_b: float | None = _doc("share of bootstrap replicates in which B keeps first "
                                "behind; absent without an interval", omit_none=True,
                                default=None)


@dataclass(frozen=True)
class FirmPairs:
    """The pairs of systems each set settles and how many of them the other swaps."""

    threshold: float = _doc("share of bootstrap replicates in which a set must keep a "
                            "pair's order for the pair to count as settled")
    pairs: int
    settled_a: int
    swapped_by_b: int = _doc("pairs A settles that B orders the other way")
    settled_b: int
    swapped_by_a: int = _doc("pairs B settles that A orders the other way")


@dataclass(frozen=True)
class AgreementInfo:
    """How alike two judgment sets rank the systems."""

    a: str
    b: str
    a_label: str
    b_label: str
    metric: str
    shared: int = _doc("queries both sets judge")
    queries_a: int
    queries_b: int
    tau: Correlation = _doc("Kendall's tau-b between the two rankings")
    rho: Correlation = _doc("Spearman's rho between the two rankings")
    systems: tuple[RankedSystem, ...]
    flips: tuple[Flip, ...]
    firm_pairs: FirmPairs | None = _doc("absent without an interval", omit_none=True,
                                        default=None)


@dataclass(frozen=True)
class Results:
    """What ``trawl eval`` and ``trawl demo`` write as ``results.json``."""

    format: str = _doc("format name and version", const=FORMAT)
    title: str
    trawl_version: str
    setup: Setup
    systems: tuple[SystemInfo, ...]
    evaluations: tuple[Evaluation, ...] = _doc("one per judgment set")
    agreement: AgreementInfo | None = _doc("None unless two judgment sets were compared")
    decision: Decision | None = _doc(
        "which system to ship under the limits asked for, with every figure it rests on; "
        "absent with a single system", omit_none=True, default=None)

    def as_dict(self) -> dict[str, Any]:
        """The JSON-ready bundle, keys in field order."""
        return to_json(self)

    @classmethod
    def from_dict(cls, data: Any, source: str = "results.json") -> Results:
        """Read a bundle back; unknown, missing or mistyped fields raise ``InputError``
        naming the field's path."""
        return from_json(cls, data, source)


# --- conversion and schema, from the dataclass fields -------------------------------------------

def to_json(value: Any) -> Any:
    """A bundle dataclass (or part of one) as plain JSON values."""
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: to_json(getattr(value, f.name)) for f in dataclasses.fields(value)
                if not (f.metadata.get("omit_none") and getattr(value, f.name) is None)}
    if isinstance(value, (list, tuple)):
        return [to_json(v) for v in value]
    if isinstance(value, Mapping):
        return {k: to_json(v) for k, v in value.items()}
    return value


def _hints(cls: type) -> dict[str, Any]:
    return typing.get_type_hints(cls)


def _optional(hint: Any) -> Any | None:
    """X for ``X | None``, else None."""
    if typing.get_origin(hint) in (typing.Union, types.UnionType):
        rest = [a for a in typing.get_args(hint) if a is not type(None)]
        if len(rest) == 1 and len(typing.get_args(hint)) == 2:
            return rest[0]
    return None


_PLAIN = {str: ("string", (str,)), int: ("integer", (int,)), float: ("number", (int, float)),
          bool: ("boolean", (bool,))}


def from_json(hint: Any, value: Any, source: str, where: str = "") -> Any:
    """``value`` read as ``hint`` (a bundle dataclass or a field type), checked."""
    def bad(what: str) -> InputError:
        return InputError(source, what, field=where or "(top level)")

    inner = _optional(hint)
    if inner is not None:
        return None if value is None else from_json(inner, value, source, where)
    if dataclasses.is_dataclass(hint):
        if not isinstance(value, dict):
            raise bad(f"expected an object, got {type(value).__name__}")
        fields = {f.name: f for f in dataclasses.fields(hint)}
        unknown = [k for k in value if k not in fields]
        if unknown:
            raise bad(f"unknown field {unknown[0]!r}; allowed: {', '.join(fields)}")
        hints, kwargs = _hints(hint), {}
        for name, f in fields.items():
            path = f"{where}.{name}" if where else name
            if name not in value:
                if f.metadata.get("omit_none"):
                    continue
                raise InputError(source, "missing", field=path)
            kwargs[name] = from_json(hints[name], value[name], source, path)
            if "const" in f.metadata and kwargs[name] != f.metadata["const"]:
                raise InputError(source, f"expected {f.metadata['const']!r}, got "
                                 f"{kwargs[name]!r}", field=path)
        return hint(**kwargs)
    origin, args = typing.get_origin(hint), typing.get_args(hint)
    if origin is tuple:
        if not isinstance(value, list):
            raise bad(f"expected a list, got {type(value).__name__}")
        return tuple(from_json(args[0], v, source, f"{where}[{i}]") for i, v in enumerate(value))
    if origin is Mapping:
        if not isinstance(value, dict):
            raise bad(f"expected an object, got {type(value).__name__}")
        return {k: from_json(args[1], v, source, f"{where}.{k}") for k, v in value.items()}
    _, allowed = _PLAIN[hint]
    if not isinstance(value, allowed) or (hint is not bool and isinstance(value, bool)):
        raise bad(f"expected {_PLAIN[hint][0]}, got {type(value).__name__}")
    return value


def _schema(hint: Any) -> dict[str, Any]:
    inner = _optional(hint)
    if inner is not None:
        return {"anyOf": [_schema(inner), {"type": "null"}]}
    if dataclasses.is_dataclass(hint):
        hints, props, required = _hints(hint), {}, []
        for f in dataclasses.fields(hint):
            prop = _schema(hints[f.name])
            if "doc" in f.metadata:
                prop["description"] = f.metadata["doc"]
            if "const" in f.metadata:
                prop["const"] = f.metadata["const"]
            props[f.name] = prop
            if not f.metadata.get("omit_none"):
                required.append(f.name)
        return {"type": "object", "description": (hint.__doc__ or "").strip(),
                "properties": props, "required": required, "additionalProperties": False}
    origin, args = typing.get_origin(hint), typing.get_args(hint)
    if origin is tuple:
        return {"type": "array", "items": _schema(args[0])}
    if origin is Mapping:
        return {"type": "object", "additionalProperties": _schema(args[1])}
    return {"type": _PLAIN[hint][0]}


def results_schema() -> dict[str, Any]:
    """A JSON Schema (draft 2020-12) of ``results.json``, derived from ``Results``."""
    return {"$schema": SCHEMA_DRAFT, "title": FORMAT, **_schema(Results)}

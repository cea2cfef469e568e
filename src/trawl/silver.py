"""Silver judgment sets: their files, how to tell one from human judgments, and the note
every silver figure carries.

A silver set written to ``PREFIX`` is three files: ``PREFIX.queries.tsv`` (the queries),
``PREFIX.qrels`` (machine-made graded judgments) and ``PREFIX.jsonl``, the provenance
sidecar (one JSON object per query: ``qid``, ``source`` item, ``style``, ``seed``, ...).
Judgments are silver when a provenance sidecar sits beside their qrels file, judged by
its content: a catalogue or any other JSONL file that happens to share the name does not
make people's judgments silver.
"""

from __future__ import annotations

import json
from collections import Counter
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from .errors import InputError
from .files import atomic_write, read_text
from .judgments import write_qrels
from .queries import write_queries

if TYPE_CHECKING:
    from .synth.compose import SilverSet

QUERIES_SUFFIX = ".queries.tsv"
QRELS_SUFFIX = ".qrels"
PROVENANCE_SUFFIX = ".jsonl"
PROVENANCE_KEYS = ("qid", "source", "style")  # every provenance record has these
QUALITY_DOC = "docs/silver-quality.md"  # measured agreement of silver with people
# Measured with bench/silver_agreement.py --lexical "bm25;stem=english", seeds 0-2, on the
# four judged collections of docs/silver-quality.md (bench/results/2026-12-03-silver-stemming.md).
STEMMING_CAUTION = (
    "silver judgments overrate lexical systems that stem words: on four judged collections "
    "silver put bm25;stem=english at 1.02-1.29x minilm's nDCG@10 where people put it at "
    "0.75-0.97x, and swapped pairs of systems people settle; do not choose these on silver "
    f"figures, judge real queries (trawl review); see {QUALITY_DOC}")


def stemming_caution(systems: Sequence[str]) -> str | None:
    """The caution beside silver figures of these systems (``pipeline.systems.stemming``
    names them); None when there are none."""
    return f"{', '.join(systems)}: {STEMMING_CAUTION}" if systems else None


@dataclass(frozen=True)
class SilverFiles:
    """The three files of the silver set written to one prefix."""

    queries: Path
    qrels: Path
    provenance: Path

    @classmethod
    def at(cls, prefix: str | Path) -> SilverFiles:
        prefix = str(prefix)
        return cls(Path(prefix + QUERIES_SUFFIX), Path(prefix + QRELS_SUFFIX),
                   Path(prefix + PROVENANCE_SUFFIX))


def write_silver(prefix: str | Path, silver: SilverSet) -> list[Path]:
    """Write PREFIX.queries.tsv, PREFIX.qrels and PREFIX.jsonl (each atomically)."""
    files = SilverFiles.at(prefix)
    write_queries(files.queries, silver.queries)
    write_qrels(files.qrels, silver.qrels)
    with atomic_write(files.provenance) as fh:
        for rec in silver.provenance:
            fh.write(json.dumps(rec, ensure_ascii=False, sort_keys=False) + "\n")
    return [files.queries, files.qrels, files.provenance]


def find_provenance(qrels_path: str | Path) -> Path | None:
    """The provenance sidecar of ``PREFIX.qrels`` (``PREFIX.jsonl``), or None when there is
    none: no such file, or one that is not the synthesis provenance of these judgments
    (a record without the provenance keys, or a judged query it does not describe)."""
    path = Path(qrels_path)
    sidecar = path.with_suffix(PROVENANCE_SUFFIX)
    if path.suffix != QRELS_SUFFIX or not sidecar.is_file():
        return None
    described = _provenance_qids(sidecar)
    if described is None or not _judged_qids(path) <= described:
        return None
    return sidecar


def is_silver(qrels_path: str | Path) -> bool:
    """Whether the judgments in ``qrels_path`` are silver (see the module docstring)."""
    return find_provenance(qrels_path) is not None


def _provenance_qids(sidecar: Path) -> set[str] | None:
    """The qids a synthesis provenance file describes; None when any record is not
    synthesis provenance (or the file cannot be read as JSONL)."""
    qids: set[str] = set()
    try:
        with sidecar.open(encoding="utf-8-sig") as fh:
            for line in fh:
                if not line.strip():
                    continue
                record = json.loads(line)
                if not isinstance(record, dict) or not all(k in record for k in PROVENANCE_KEYS):
                    return None
                qids.add(str(record["qid"]))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError):
        return None
    return qids or None


def _judged_qids(qrels_path: Path) -> set[str]:
    """The first field of every line: the judged query ids, without checking the rest."""
    try:
        with qrels_path.open(encoding="utf-8-sig", errors="replace") as fh:
            return {line.split(None, 1)[0] for line in fh if line.strip()}
    except OSError:
        return set()


def _records(path: Path, what: str):
    """(line number, object) of each non-empty line of a JSONL provenance file."""
    for n, line in enumerate(read_text(path, what).split("\n"), start=1):
        if not line.strip():
            continue
        try:
            obj = json.loads(line)
        except json.JSONDecodeError as exc:
            raise InputError(path, f"malformed JSON: {exc.msg} (column {exc.colno})",
                             line=n) from None
        if not isinstance(obj, dict):
            raise InputError(path, "expected a JSON object per line", line=n)
        yield n, obj


def read_styles(path: str | Path) -> dict[str, str]:
    """Query style per qid from a synthesis provenance file (one JSON object per line).

    Read defensively: objects without a ``style`` give "", unknown fields are ignored.
    """
    out: dict[str, str] = {}
    for n, obj in _records(Path(path), "provenance file"):
        qid = obj.get("qid")
        if not isinstance(qid, (str, int)) or isinstance(qid, bool) or str(qid) == "":
            raise InputError(path, "missing or empty; every line needs the query id", line=n,
                             field="qid")
        style = obj.get("style")
        out[str(qid)] = style if isinstance(style, str) else ""
    return out


def query_styles(qrels_path: str | Path, provenance: str | Path | None = None
                 ) -> tuple[dict[str, str] | None, Path | None]:
    """Query styles from ``provenance``, or from the sidecar found beside the qrels when
    none is given; (None, None) when there is neither. Returns the file read too."""
    path = Path(provenance) if provenance is not None else find_provenance(qrels_path)
    return (read_styles(path), path) if path is not None else (None, None)


def describe_silver(sidecar: str | Path) -> str:
    """How a silver set was made, from its provenance lines (styles, seeds)."""
    styles: Counter[str] = Counter()
    seeds: set[Any] = set()
    for _, rec in _records(Path(sidecar), "provenance file"):
        styles[str(rec.get("style", "unknown"))] += 1
        seeds.add(rec.get("seed"))
    mix = ", ".join(f"{s} {c}" for s, c in sorted(styles.items(), key=lambda kv: (-kv[1], kv[0])))
    seed_text = ", ".join(str(s) for s in sorted(seeds, key=str))
    return f"synthesised from the catalogue by trawl synth ({mix}; seed {seed_text})"


# --- the note beside every silver figure ------------------------------------------------------

@dataclass(frozen=True)
class MeasuredAgreement:
    """Kendall's tau between the system rankings under a silver set and under ``other``."""

    other: str
    tau: float | None
    low: float | None = None
    high: float | None = None
    settled: int | None = None  # pairs of systems ``other`` settles (agreement.FirmPairs)
    swapped: int | None = None  # ... of which the silver set swaps this many

    @classmethod
    def from_dict(cls, other: str, tau: Mapping[str, Any]) -> MeasuredAgreement:
        """From ``{"value", "low", "high"}`` as in ``Agreement.as_dict()["kendall_tau_b"]``."""
        return cls(other, tau.get("value"), tau.get("low"), tau.get("high"))


def silver_note(qrels_path: str | Path | None = None,
                measured: MeasuredAgreement | None = None) -> str:
    """The note every silver figure carries: the figures are estimates, the agreement
    measured against people's judgments when known, and where silver's quality is written
    up. With ``qrels_path``: the note printed after a table of scores under that file;
    without: the phrase that names a silver set beside its figures."""
    if measured is not None:
        trust = (f"system rankings against {measured.other}: Kendall's tau "
                 f"{_two(measured.tau)}" + (f" ({_two(measured.low)} to {_two(measured.high)})"
                                            if _known(measured.low, measured.high) else ""))
        if measured.settled is not None and measured.swapped is not None:
            trust += (f", swapping {measured.swapped} of the {measured.settled} pairs of "
                      f"systems {measured.other} settles")
    elif qrels_path is not None:
        trust = "`trawl review` and `trawl agree` measure how far to trust them"
    else:
        trust = "agreement with human judgments not measured"
    if qrels_path is None:
        return f"silver judgments: figures are estimates; {trust}; see {QUALITY_DOC}"
    return (f"note: {qrels_path} holds silver (machine-made) judgments, so every figure above "
            "is an estimate of what people's judgments would give (read it for the order of "
            f"systems: synthesised queries are easier, so levels run high); {trust}; "
            f"see {QUALITY_DOC}")


def _known(*values: float | None) -> bool:
    return all(v is not None and v == v for v in values)  # v == v is False for NaN


def _two(v: float | None) -> str:
    return f"{v:.2f}" if _known(v) else "not computable"

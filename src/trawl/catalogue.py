"""Load and validate a catalogue of search destinations (JSONL, CSV or Parquet).

Every item has an ``id``, a destination ``type`` and a ``title``; ``text``, ``deeplink``,
``related`` and ``tags`` are optional and any other field is kept as metadata, so a
text template can use it. Validation errors name file, line (or row) and field.
"""

from __future__ import annotations

import ast
import csv
import hashlib
import io
import json
import math
import re
import sys
from collections import Counter
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path
from types import MappingProxyType
from typing import Any

from .errors import CatalogueError, UsageError
from .files import decode_utf8
from .ids import is_valid_id
from .texttemplate import TextTemplate, check_template

REQUIRED = ("id", "type", "title")
KNOWN = ("id", "type", "title", "text", "deeplink", "related", "tags")
FORMATS = {".jsonl": "jsonl", ".ndjson": "jsonl", ".csv": "csv", ".parquet": "parquet",
           ".pq": "parquet"}
LIST_SEPARATOR = "|"  # CSV related/tags: "a|b|c", a JSON array or a Python list
CSV_FIELD_LIMIT = 2**31 - 1  # the csv module's 128 KiB default rejects long texts
_SURROGATE = re.compile("[\ud800-\udfff]")


@dataclass(frozen=True)
class Item:
    """One search destination: an article, FAQ entry, screen, form, ..."""

    id: str
    type: str
    title: str
    text: str = ""
    deeplink: str = ""
    related: tuple[str, ...] = ()
    tags: tuple[str, ...] = ()
    meta: Mapping[str, Any] = field(default_factory=lambda: MappingProxyType({}),
                                    compare=False, hash=False)
    line: int = field(default=0, compare=False)  # source line (JSONL/CSV) or row (Parquet)

    def fields(self) -> dict[str, Any]:
        """All fields a template may use; list fields are joined with ", "."""
        out: dict[str, Any] = dict(self.meta)
        out.update(id=self.id, type=self.type, title=self.title, text=self.text,
                   deeplink=self.deeplink, related=", ".join(self.related),
                   tags=", ".join(self.tags))
        return out

    def canonical(self) -> dict[str, Any]:
        """Content as plain JSON values, the basis of the fingerprint."""
        return {"id": self.id, "type": self.type, "title": self.title, "text": self.text,
                "deeplink": self.deeplink, "related": list(self.related),
                "tags": list(self.tags), "meta": _jsonable(dict(self.meta))}


@dataclass(frozen=True)
class Catalogue:
    """A validated, ordered set of items with a content fingerprint."""

    path: str
    items: tuple[Item, ...]
    template: TextTemplate = TextTemplate()

    def __post_init__(self) -> None:
        object.__setattr__(self, "_by_id", {it.id: it for it in self.items})

    @property
    def by_id(self) -> Mapping[str, Item]:
        return self._by_id  # type: ignore[attr-defined]

    def __len__(self) -> int:
        return len(self.items)

    @property
    def ids(self) -> list[str]:
        return [it.id for it in self.items]

    def texts(self) -> list[str]:
        """Item texts through the template, in item order."""
        return [self.template.render(it) for it in self.items]

    def type_counts(self) -> dict[str, int]:
        return dict(sorted(Counter(it.type for it in self.items).items()))

    @cached_property
    def fingerprint(self) -> str:
        """Content hash, independent of file format, line order and template (the same
        content embedded differently is the same catalogue; indexes record their template).
        Computed once (items are immutable): seconds on 200k items, asked for per system."""
        h = hashlib.sha256()
        for it in sorted(self.items, key=lambda i: i.id):
            h.update(json.dumps(it.canonical(), sort_keys=True, ensure_ascii=False).encode())
            h.update(b"\n")
        return h.hexdigest()[:16]

    def with_template(self, pattern: str) -> Catalogue:
        """The same items under another template, refused if it names a field no item has."""
        template = TextTemplate(pattern)
        check_template(template, [it.fields() for it in self.items], self.path)
        return Catalogue(self.path, self.items, template)


def load_catalogue(path: str | Path, template: str | None = None) -> Catalogue:
    """Read and validate a catalogue; the format follows the file extension."""
    path = Path(path)
    fmt = FORMATS.get(path.suffix.lower())
    if fmt is None:
        raise CatalogueError(path, f"unknown catalogue format {path.suffix or '(none)'!r}; "
                             "use .jsonl, .csv or .parquet")
    try:
        is_dir = path.is_dir()
        if not is_dir:
            path.stat()
    except FileNotFoundError:
        raise CatalogueError(path, "catalogue file not found") from None
    except OSError as exc:  # e.g. a name too long, a loop of links
        raise CatalogueError(path, f"cannot read catalogue: {exc.strerror}") from None
    if is_dir:
        raise CatalogueError(path, "catalogue is a folder, expected a file")
    if fmt == "parquet":
        records = _parquet_records(path)
    else:
        try:
            data = path.read_bytes()
        except OSError as exc:
            raise CatalogueError(path, f"cannot read catalogue: {exc.strerror}") from None
        if not data.strip():
            raise CatalogueError(path, "catalogue is empty; expected one item per "
                                 + ("line" if fmt == "jsonl" else "row after the header"))
        text = decode_utf8(path, data)
        records = _jsonl_records(path, text) if fmt == "jsonl" else _csv_records(path, text)
    items = _validate(path, records, fmt)
    if not items:
        raise CatalogueError(path, "catalogue has no items")
    pattern = TextTemplate(template) if template is not None else TextTemplate()
    check_template(pattern, [it.fields() for it in items], path)
    return Catalogue(str(path), tuple(items), pattern)


# --- readers: each yields (line_or_row, dict) -------------------------------------------

def _jsonl_records(path: Path, text: str) -> Iterable[tuple[int, dict]]:
    for n, line in enumerate(text.split("\n"), start=1):
        if not line.strip():
            continue
        obj = _json_loads(path, n, line, "malformed JSON")
        if not isinstance(obj, dict):
            raise CatalogueError(path, f"expected a JSON object, got {_kind(obj)}", line=n)
        if "\\u" in line:  # only escapes can smuggle in half a UTF-16 pair
            for key, value in obj.items():
                bad = _SURROGATE.search(json.dumps([key, value], ensure_ascii=False))
                if bad:
                    raise CatalogueError(
                        path, f"contains an unpaired surrogate escape (\\u{ord(bad.group()):x});"
                        " it is not text; re-export the file as UTF-8", line=n,
                        field=key if key.isprintable() else repr(key))
        yield n, obj


def _json_loads(path: Path, n: int, text: str, what: str, field: str | None = None) -> Any:
    """``json.loads`` whose every failure is a located CatalogueError."""
    try:
        return json.loads(text)
    except json.JSONDecodeError as exc:
        raise CatalogueError(path, f"{what}: {exc.msg} (column {exc.colno})", line=n,
                             field=field) from None
    except RecursionError:
        raise CatalogueError(path, f"{what}: nested too deeply", line=n, field=field) from None
    except ValueError:  # an integer longer than Python's conversion limit
        raise CatalogueError(path, f"{what}: a number has more than "
                             f"{sys.get_int_max_str_digits()} digits; write long ids as strings",
                             line=n, field=field) from None


def _csv_records(path: Path, text: str) -> Iterable[tuple[int, dict]]:
    if "\x00" in text:
        line = text[: text.index("\x00")].count("\n") + 1
        raise CatalogueError(path, "NUL byte in CSV data; the file is binary or corrupt",
                             line=line)
    csv.field_size_limit(max(csv.field_size_limit(), CSV_FIELD_LIMIT))
    reader = csv.reader(io.StringIO(text, newline=""), strict=True)
    try:
        header = next(reader)
    except StopIteration:
        raise CatalogueError(path, "catalogue is empty") from None
    except csv.Error as exc:
        raise CatalogueError(path, f"malformed CSV: {exc}", line=1) from None
    header = [h.strip() for h in header]
    for col in REQUIRED:
        if col not in header:
            raise CatalogueError(path, f"missing column {col!r}; the header must name "
                                 f"{', '.join(REQUIRED)}", line=1, field="header")
    dupes = [h for h, c in Counter(header).items() if c > 1 and h]
    if dupes:
        raise CatalogueError(path, f"column {dupes[0]!r} appears twice", line=1, field="header")
    start = 2
    while True:
        try:
            row = next(reader)
        except StopIteration:
            return
        except csv.Error as exc:
            raise CatalogueError(path, f"malformed CSV: {exc}", line=reader.line_num) from None
        line, start = start, reader.line_num + 1
        if not any(cell.strip() for cell in row):
            continue
        if len(row) != len(header):
            raise CatalogueError(path, f"expected {len(header)} cells as in the header, "
                                 f"got {len(row)}", line=line)
        # an empty optional cell is an absent field; an empty required one is "empty";
        # a nameless column (the row index pandas writes) is no field at all
        rec = {h: v for h, v in zip(header, row) if h and (v != "" or h in REQUIRED)}
        for key in ("related", "tags"):
            if key in rec:
                rec[key] = _split_cell(path, line, key, rec[key])
        yield line, rec


def _split_cell(path: Path, line: int, key: str, cell: str) -> list[str] | Any:
    """``a|b``, a JSON array, or the Python list ``df.to_csv`` writes (``['a', 'b']``)."""
    cell = cell.strip()
    if cell.startswith("["):
        if "'" in cell:
            python = _python_str_list(cell)
            if python is not None:
                return python
        return _json_loads(path, line, cell, "malformed JSON list", field=key)
    return [p.strip() for p in cell.split(LIST_SEPARATOR) if p.strip()]


def _python_str_list(cell: str) -> list[str] | None:
    """A Python list literal of strings, read without evaluating anything; else None.

    The cell is parsed to a syntax tree and accepted only as a list whose elements are
    all string (or whole-number) constants, so no code in a cell can ever run.
    """
    try:
        tree = ast.parse(cell, mode="eval").body
    except (SyntaxError, ValueError, RecursionError, MemoryError):
        return None
    if not isinstance(tree, ast.List):
        return None
    out = []
    for el in tree.elts:
        if not isinstance(el, ast.Constant) or isinstance(el.value, bool) \
                or not isinstance(el.value, (str, int)):
            return None
        out.append(str(el.value))
    return out


def _parquet_records(path: Path) -> Iterable[tuple[int, dict]]:
    import pyarrow as pa
    import pyarrow.parquet as pq

    try:
        table = pq.read_table(path)
        columns = table.column_names
    except (pa.ArrowException, OSError, ValueError) as exc:  # ValueError: names not UTF-8
        raise CatalogueError(path, f"cannot read Parquet file: {_one_line(exc)}") from None
    if table.num_rows == 0:
        raise CatalogueError(path, "catalogue is empty; the Parquet file has no rows")
    for col in REQUIRED:
        if col not in columns:
            raise CatalogueError(path, f"missing column {col!r}; columns must include "
                                 f"{', '.join(REQUIRED)}", field="header")
    try:
        rows = table.to_pylist()
    except (pa.ArrowException, ValueError) as exc:  # e.g. invalid UTF-8, dates out of range
        raise CatalogueError(path, f"cannot read Parquet file: {_one_line(exc)}") from None
    for n, rec in enumerate(rows, start=1):
        yield n, {k: v for k, v in rec.items() if v is not None
                  and not (isinstance(v, float) and math.isnan(v))}


# --- validation ---------------------------------------------------------------------------

def _validate(path: Path, records: Iterable[tuple[int, dict]], fmt: str) -> list[Item]:
    where = "row" if fmt == "parquet" else "line"
    items: list[Item] = []
    first_seen: dict[str, int] = {}
    pending_related: list[tuple[int, str]] = []
    for n, rec in records:
        item_id = _id_value(path, n, rec)
        if item_id in first_seen:
            raise CatalogueError(path, f"duplicate id {item_id!r} (first on {where} "
                                 f"{first_seen[item_id]}); ids must be unique", line=n, field="id")
        first_seen[item_id] = n
        typ = _required_str(path, n, rec, "type")
        title = _required_str(path, n, rec, "title", allow_empty=True)
        text = _optional_str(path, n, rec, "text")
        deeplink = _optional_str(path, n, rec, "deeplink")
        related = _str_list(path, n, rec, "related")
        tags = _str_list(path, n, rec, "tags")
        meta = {k: v for k, v in rec.items() if k not in KNOWN}
        for rid in related:
            pending_related.append((n, rid))
        items.append(Item(item_id, typ, title, text, deeplink, related, tags,
                          MappingProxyType(meta), n))
    for n, rid in pending_related:
        if rid not in first_seen:
            raise CatalogueError(path, f"unknown id {rid!r}; related ids must name items in "
                                 "this catalogue", line=n, field="related")
    return items


def _id_value(path: Path, n: int, rec: dict) -> str:
    if "id" not in rec:
        raise CatalogueError(path, "missing; every item needs a unique, non-empty id",
                             line=n, field="id")
    v = rec["id"]
    if isinstance(v, bool) or not isinstance(v, (str, int)):
        raise CatalogueError(path, f"must be a string, got {_kind(v)}", line=n, field="id")
    v = str(v)
    if not v.strip():
        raise CatalogueError(path, "empty; every item needs a unique, non-empty id",
                             line=n, field="id")
    if not is_valid_id(v):
        raise CatalogueError(path, f"{v!r} contains white space, which TREC qrels and run "
                             "files cannot hold; use e.g. '-' or '_'", line=n, field="id")
    return v


def _required_str(path: Path, n: int, rec: dict, key: str, allow_empty: bool = False) -> str:
    """A field that must be present; an empty title is tolerated (real exports have them,
    and `check` warns), an empty type is not (per-type breakdowns need it)."""
    if key not in rec:
        raise CatalogueError(path, f"missing; every item needs a {key}", line=n, field=key)
    v = rec[key]
    if not isinstance(v, str):
        raise CatalogueError(path, f"must be a string, got {_kind(v)}", line=n, field=key)
    if not v.strip() and not allow_empty:
        raise CatalogueError(path, f"empty; every item needs a {key}", line=n, field=key)
    return v.strip()


def _optional_str(path: Path, n: int, rec: dict, key: str) -> str:
    v = rec.get(key)
    if v is None:
        return ""
    if not isinstance(v, str):
        raise CatalogueError(path, f"must be a string, got {_kind(v)}", line=n, field=key)
    return v.strip()


def _str_list(path: Path, n: int, rec: dict, key: str) -> tuple[str, ...]:
    v = rec.get(key)
    if v is None:
        return ()
    if isinstance(v, str):
        v = [v] if v.strip() else []
    if hasattr(v, "tolist") and not isinstance(v, list):  # numpy arrays from Parquet
        v = v.tolist()
    if not isinstance(v, (list, tuple)):
        raise CatalogueError(path, f"must be a list of strings, got {_kind(v)}", line=n,
                             field=key)
    out = []
    for x in v:
        if not isinstance(x, (str, int)) or isinstance(x, bool):
            raise CatalogueError(path, f"must be a list of strings, found {_kind(x)}",
                                 line=n, field=key)
        x = str(x).strip()
        if x and x not in out:
            out.append(x)
    return tuple(out)


def _one_line(exc: BaseException) -> str:
    """Library messages can span lines; ours are one line."""
    return " ".join(str(exc).split())


def _kind(v: Any) -> str:
    if v is None:
        return "null"
    if isinstance(v, bool):
        return "a boolean"
    if isinstance(v, (int, float)):
        return f"number {v!r}"
    if isinstance(v, (list, tuple)):
        return "a list"
    if isinstance(v, dict):
        return "an object"
    return type(v).__name__


def _jsonable(v: Any) -> Any:
    if isinstance(v, Mapping):
        return {str(k): _jsonable(x) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [_jsonable(x) for x in v]
    if hasattr(v, "tolist"):
        return _jsonable(v.tolist())
    if isinstance(v, (str, int, float, bool)) or v is None:
        return v
    return str(v)


# --- the `check` report ---------------------------------------------------------------------

def _lookalike_warnings(cat: Catalogue) -> list[str]:
    """Ids, types and related ids that print alike but differ (``lookalike``): a qrels
    or run line written with the other form would silently not match."""
    from .lookalike import describe, groups, near_miss_lines

    line = {it.id: it.line for it in cat.items}
    out = [f"{cat.path}:{line[g[1]]}: item ids that look alike but differ: {describe(g)}"
           for g in groups(cat.ids)]
    out += [f"{cat.path}: destination types that look alike but differ, counted apart: "
            f"{describe(g)}" for g in groups(cat.type_counts())]
    related = dict.fromkeys(r for it in cat.items for r in it.related if r not in line)
    out += [f"{cat.path}: related id {near} but is not the same id"
            for near in near_miss_lines(related, line)]
    return out



@dataclass(frozen=True)
class CheckReport:
    """What `trawl check` tells: counts per type, text lengths and warnings."""

    path: str
    items: int
    fingerprint: str
    types: Mapping[str, int]
    length_unit: str
    length_percentiles: Mapping[str, float]
    over_window: int
    warnings: tuple[str, ...]

    def as_dict(self) -> dict[str, Any]:
        return {"path": self.path, "items": self.items, "fingerprint": self.fingerprint,
                "types": dict(self.types), "length_unit": self.length_unit,
                "length_percentiles": dict(self.length_percentiles),
                "over_window": self.over_window, "warnings": list(self.warnings)}


NEAR_EMPTY_WORDS = 3  # common practice, no source: a title alone of <=3 words gives little to match


def check_catalogue(cat: Catalogue, unit: str = "tokens") -> CheckReport:
    """Summarise a catalogue and flag items that will search badly."""
    import numpy as np

    texts = cat.texts()
    if unit == "tokens":
        from .bundled import MAX_TOKENS, tokenizer

        lengths = [len(e.ids) - 2 for e in tokenizer().encode_batch(texts)]  # minus [CLS]/[SEP]
        over = sum(1 for n in lengths if n + 2 > MAX_TOKENS)
    elif unit == "words":
        lengths = [len(t.split()) for t in texts]
        over = 0
    else:
        raise UsageError(f"length unit {unit!r} is not one of: tokens, words")
    arr = np.asarray(lengths, dtype=float)
    pct = {f"p{p}": float(np.percentile(arr, p)) for p in (5, 25, 50, 75, 95)}
    pct["max"] = float(arr.max())
    warnings: list[str] = []
    for it, text in zip(cat.items, texts):  # the text it is indexed with, template applied
        words = len(text.split())
        if words <= NEAR_EMPTY_WORDS:
            warnings.append(f"{cat.path}:{it.line}: near-empty item {it.id!r} "
                            f"({words} words); it will rarely be found")
        elif not it.title:
            warnings.append(f"{cat.path}:{it.line}: item {it.id!r} has an empty title")
    seen: dict[str, Item] = {}
    for it in cat.items:
        if not it.title:
            continue
        key = " ".join(it.title.lower().split())
        if key in seen:
            first = seen[key]
            warnings.append(f"{cat.path}:{it.line}: title of {it.id!r} duplicates "
                            f"{first.id!r} (line {first.line}): {it.title!r}")
        else:
            seen[key] = it
    if over:
        warnings.append(f"{over} item(s) exceed the bundled encoder's window of "
                        f"{MAX_TOKENS} tokens; their tails are not embedded")
    warnings += _lookalike_warnings(cat)
    return CheckReport(cat.path, len(cat), cat.fingerprint, cat.type_counts(), unit, pct,
                       over, tuple(warnings))


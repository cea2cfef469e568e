"""TREC runs read straight into columns, so memory follows the file's size in bytes.

A run of 100,000 queries x 100 results is 10 million lines; held as Python tuples of
(item id, score) it takes gigabytes, while the same data as one int32 item code and one
float64 score per line, plus each distinct item id once, takes about 120 MB. pyarrow's
CSV parser reads such a file in a few seconds on several threads without ever making a
Python object per line.

The vectorised reader takes only files whose fields the line-by-line reader in
``runs.read_run`` would split the same way (one space or one tab between fields, no
other whitespace, no stray control characters) and whose values it would accept. For
anything else, or any value it cannot vouch for (a NaN score, a signed rank, a
duplicate item), it returns None and the line-by-line reader produces the result or the
located error; so the two never disagree.

The columns travel inside an ordinary ``Run`` as a read-only mapping
(``RankedColumns``): every consumer keeps asking ``run.results[qid]`` for tuples, and
scoring (``metrics``) reads the columns directly.
"""

from __future__ import annotations

import re
from collections.abc import Iterator, Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np

SCAN_BLOCK = 1 << 24   # bytes of a file parsed at a time
PARSE_BLOCK = 1 << 21  # bytes per pyarrow parse task (blocks are parsed on several threads)
GAIN_ROWS = 1 << 20    # run lines looked up at a time when scoring
# UTF-8 that may be Unicode whitespace (U+0085, U+00A0, U+1680, U+2000-U+200A, U+2028/9,
# U+202F, U+205F, U+3000), which str.split() splits on, or a byte-order mark, which the
# careful reader drops from the start of a file.
_SUSPECT = (b"\xc2\x85", b"\xc2\xa0", b"\xe1\x9a\x80", b"\xe2\x80", b"\xe2\x81\x9f",
            b"\xe3\x80\x80", b"\xef\xbb\xbf")
_RUN_FIELDS = ("qid", "q0", "item", "rank", "score", "tag")
_SPACES = re.compile(rb" {2,}")


class RankedColumns(Mapping[str, tuple[tuple[str, float], ...]]):
    """A run's results as columns: ``self[qid]`` gives (item id, score) tuples, best first.

    Lines are grouped by query (queries in file order of first appearance) and within a
    query in trec_eval order; ``offsets[i]:offsets[i + 1]`` are query i's lines,
    ``codes`` index ``vocabulary`` (each distinct item id once) and ``scores`` holds the
    scores (``Scores``: as written, or coded when they repeat).
    """

    def __init__(self, qids: list[str], offsets: np.ndarray, codes: np.ndarray,
                 scores: Scores, vocabulary: Any) -> None:
        self.qids = qids
        self.offsets = offsets
        self.codes = codes
        self.scores = scores
        self.vocabulary = vocabulary  # pyarrow StringArray
        self._position = {q: i for i, q in enumerate(qids)}

    def __getitem__(self, qid: str) -> tuple[tuple[str, float], ...]:
        i = self._position[qid]
        a, b = int(self.offsets[i]), int(self.offsets[i + 1])
        items = self.vocabulary.take(self.codes[a:b]).to_pylist()
        return tuple(zip(items, self.scores.between(a, b)))

    def __iter__(self) -> Iterator[str]:
        return iter(self.qids)

    def __len__(self) -> int:
        return len(self.qids)

    def __contains__(self, qid: object) -> bool:
        return qid in self._position

    def position(self, qid: str) -> int:
        """Row of ``qid`` in ``qids``, -1 when the run has no results for it."""
        return self._position.get(qid, -1)

    def distinct_items(self) -> set[str]:
        return set(self.vocabulary.to_pylist())

    @property
    def nbytes(self) -> int:
        return (self.offsets.nbytes + self.codes.nbytes + self.scores.nbytes
                + self.vocabulary.nbytes)


class Scores:
    """A run's scores in line order, exactly as read. Runs often repeat a small set of
    values (scores rounded to a few decimals, integer ranks as scores); up to 65,536
    distinct values are kept as 2-byte codes into a table of them, a quarter of the
    memory of one float64 per line, which matters when several long runs are compared."""

    def __init__(self, values: np.ndarray) -> None:
        import pyarrow as pa
        import pyarrow.compute as pc

        coded = pc.dictionary_encode(pa.array(values))
        self._table: np.ndarray | None = None
        self._values = values
        if len(coded.dictionary) <= 1 << 16:
            self._table = coded.dictionary.to_numpy()
            self._values = _view(coded.indices).astype(np.uint16)

    def between(self, a: int, b: int) -> list[float]:
        part = self._values[a:b]
        return (part if self._table is None else self._table[part]).tolist()

    @property
    def nbytes(self) -> int:
        return self._values.nbytes + (0 if self._table is None else self._table.nbytes)


def result_count(results: Mapping[str, Sequence[Any]], qid: str) -> int:
    """Results a run lists for ``qid``, without making tuples of columns."""
    if isinstance(results, RankedColumns):
        i = results.position(qid)
        return 0 if i < 0 else int(results.offsets[i + 1] - results.offsets[i])
    return len(results.get(qid, ()))


def listed_items(results: Mapping[str, Sequence[tuple[str, float]]]) -> set[str]:
    """Every item id a run lists."""
    if isinstance(results, RankedColumns):
        return results.distinct_items()
    return {item for pairs in results.values() for item, _ in pairs}


# --- reading -----------------------------------------------------------------------------------

def read_run_columns(path: str | Path) -> tuple[str, RankedColumns] | None:
    """(first tag, columns) of a run, or None to read it line by line.

    The file is parsed a block of lines at a time into preallocated arrays (sized for
    the shortest possible lines; pages never written cost no memory), so the peak is
    the columns plus one block, whatever the file's size.
    """
    path = Path(path)
    try:
        cap = path.stat().st_size // 12 + 1  # "q Q0 i 1 1 t\n" is 13 bytes
        queries, codes = np.empty(cap, dtype=np.int32), np.empty(cap, dtype=np.int32)
        scores = np.empty(cap, dtype=np.float64)
        spans: list[tuple[int, int, Any, Any]] = []  # lines a:b, their qid and item dictionaries
        tag, n = None, 0
        for i, block in enumerate(blocks(path)):
            if i and bytes(block[:3]) == b"\xef\xbb\xbf":
                return None  # pyarrow would drop it as a byte-order mark; the file keeps it
            table = _parse(block) or _parse(normalised(block))
            if table is None:
                return None
            m = table.num_rows
            queries[n:n + m], qids = _codes(table["qid"])
            codes[n:n + m], items = _codes(table["item"])
            scores[n:n + m] = _numpy(table["score"])
            if tag is None and m:
                tag_codes, tags = _codes(table["tag"])
                tag = tags[int(tag_codes[0])].as_py()
            spans.append((n, n + m, qids, items))
            n += m
    except OSError:
        return None  # the careful reader names what is wrong with the file
    if tag is None:
        return None
    queries, codes, scores = queries[:n], codes[:n], scores[:n]
    if not np.isfinite(scores).all():
        return None  # nan and inf are refused (trawl.numbers), with the line, by the other reader
    qid_values = _unify(queries, [(a, b, q) for a, b, q, _ in spans])
    vocabulary = _unify(codes, [(a, b, i) for a, b, _, i in spans])
    columns = _rank_ordered(qid_values, queries, codes, scores, vocabulary)
    return None if columns is None else (tag, columns)


def blocks(path: Path) -> Iterator[Any]:
    """The file's bytes in blocks of whole lines (views of one reused buffer)."""
    with path.open("rb") as fh:
        buffer = bytearray(SCAN_BLOCK)
        kept = 0  # bytes of an unfinished line carried over from the previous read
        while True:
            if kept == len(buffer):  # a line longer than the buffer (a new one: views remain)
                buffer = buffer + bytearray(len(buffer))
            got = fh.readinto(memoryview(buffer)[kept:])
            end = kept + got
            cut = buffer.rfind(b"\n", 0, end) + 1 if got else end
            if cut:
                yield memoryview(buffer)[:cut]
            buffer[:end - cut] = buffer[cut:end]
            kept = end - cut
            if not got:
                return
def _pool() -> Any:
    """jemalloc where pyarrow has it: it hands the per-block parse memory back to the
    system sooner than the default pool, so reading several runs holds less."""
    import pyarrow as pa

    try:
        return pa.jemalloc_memory_pool()
    except NotImplementedError:
        return None


def normalised(block: Any) -> bytes:
    """Runs of spaces and tabs as one space, none at line ends (what str.split() sees)."""
    block = _SPACES.sub(b" ", bytes(block).replace(b"\t", b" "))
    return block.replace(b" \n", b"\n").replace(b"\n ", b"\n").strip(b" ")


def _unify(codes: np.ndarray, spans: list[tuple[int, int, Any]]) -> Any:
    """One dictionary for the per-block dictionaries; ``codes`` recoded into it in place."""
    import pyarrow as pa

    if len(spans) == 1:
        return spans[0][2]
    whole = [pa.DictionaryArray.from_arrays(pa.array(np.arange(len(d), dtype=np.int32)), d)
             for _, _, d in spans]
    unified = pa.chunked_array(whole).unify_dictionaries()
    for (a, b, _), recode in zip(spans, unified.chunks):
        codes[a:b] = _view(recode.indices)[codes[a:b]]
    return unified.chunk(0).dictionary


def _parse(block: bytes) -> Any:
    """pyarrow table (qid, item, score, tag) of a block of run lines, or None."""
    import pyarrow as pa

    table = parse_block(block, _RUN_FIELDS, {"score": pa.float64()})
    if table is None or not _whole_ranks(table["rank"]):
        return None
    return table.drop_columns(["q0", "rank"])  # checked is all they are needed for


def parse_block(block: Any, fields: Sequence[str], numbers: Mapping[str, Any]) -> Any:
    """pyarrow table of a block of lines of ``fields`` joined by single spaces: text
    fields as one dictionary per column, ``numbers`` (field -> pyarrow type) parsed; None
    when a line or value is not what the careful reader would read the same way."""
    import pyarrow as pa
    from pyarrow import csv

    text = pa.dictionary(pa.int32(), pa.string())
    types = {f: numbers.get(f, text) for f in fields}
    try:
        table = csv.read_csv(
            pa.BufferReader(pa.py_buffer(block)),
            csv.ReadOptions(column_names=list(fields), block_size=PARSE_BLOCK),
            csv.ParseOptions(delimiter=" ", quote_char=False, double_quote=False,
                             escape_char=False, ignore_empty_lines=True),
            csv.ConvertOptions(column_types=types, null_values=[], strings_can_be_null=False,
                               check_utf8=True),
            memory_pool=_pool())
    except pa.ArrowInvalid:
        return None  # a field count, number or encoding the careful reader will locate
    table = table.unify_dictionaries()
    for name in fields:
        if name not in numbers and table.num_rows \
                and not _plain_words(table[name].chunk(0).dictionary):
            return None
    return table


def _whole_ranks(column: Any) -> bool:
    """Every distinct rank is a whole number by ``trawl.numbers``' grammar (pyarrow's
    own integer parser also takes hexadecimal such as 0x1F)."""
    from .numbers import WHOLE

    return all(WHOLE.fullmatch(v) for c in column.chunks for v in c.dictionary.to_pylist())


def _plain_words(values: Any) -> bool:
    """No whitespace or control character in any of ``values`` (a pyarrow StringArray),
    so one space between fields split them exactly as str.split() does."""
    offsets = np.frombuffer(values.buffers()[1], dtype=np.int32)[values.offset:]
    data = bytes(values.buffers()[2] or b"")[offsets[0]:offsets[len(values)]]
    if np.count_nonzero(np.frombuffer(data, dtype=np.uint8) <= 32):
        return False
    return data.isascii() or not any(s in data for s in _SUSPECT)


def _numpy(column: Any) -> np.ndarray:
    """One numpy array of a chunked float64 or int32 column without nulls."""
    chunks = column.chunks
    if not chunks:
        return np.empty(0, dtype=np.float64)
    if len(chunks) == 1:
        return _view(chunks[0])
    out = np.empty(len(column), dtype=_view(chunks[0]).dtype)
    at = 0
    for c in chunks:
        out[at:at + len(c)] = _view(c)
        at += len(c)
    return out


def _view(array: Any) -> np.ndarray:
    """The values buffer of a fixed-width pyarrow array, without a copy."""
    dtype = np.dtype(np.float64 if str(array.type) == "double" else np.int32)
    return np.frombuffer(array.buffers()[1], dtype=dtype)[array.offset:array.offset + len(array)]


def _codes(column: Any) -> tuple[np.ndarray, Any]:
    """int32 codes and the dictionary of a unified dictionary column."""
    import pyarrow as pa

    if column.num_chunks == 0:
        return np.empty(0, dtype=np.int32), pa.array([], pa.string())
    indices = pa.chunked_array([c.indices for c in column.chunks], type=pa.int32())
    return _numpy(indices), column.chunk(0).dictionary


def _rank_ordered(qid_values: Any, queries: np.ndarray, codes: np.ndarray,
                  scores: np.ndarray, vocabulary: Any) -> RankedColumns | None:
    """Group lines by query (first-appearance order) and put each query in trec_eval
    order; None when a query lists an item twice."""
    starts = np.flatnonzero(np.concatenate(([True], queries[1:] != queries[:-1])))
    present, first = np.unique(queries[starts], return_index=True)
    appearance = np.argsort(starts[first], kind="stable")  # codes in order of first line
    if not np.array_equal(present[appearance], np.arange(present.size)):
        order_of = np.empty(present.size, dtype=np.int32)
        order_of[present[appearance]] = np.arange(present.size, dtype=np.int32)
        queries = order_of[queries]
    if starts.size != present.size:  # a query's lines are not contiguous
        regroup = np.argsort(queries, kind="stable")
        queries, codes, scores = queries[regroup], codes[regroup], scores[regroup]
    import pyarrow as pa

    qids = qid_values.take(pa.array(present[appearance])).to_pylist()
    offsets = np.searchsorted(queries, np.arange(len(qids) + 1)).astype(np.int64)
    item_rank = _sort_positions(vocabulary)
    codes, scores = _put_in_rank_order(queries, codes, scores, item_rank)
    if _has_duplicates(queries, codes, offsets, len(vocabulary)):
        return None
    return RankedColumns(qids, offsets, codes, Scores(scores), vocabulary)


def _has_duplicates(queries: np.ndarray, codes: np.ndarray, offsets: np.ndarray,
                    items: int) -> bool:
    """Whether a query lists an item twice, checked a block of queries at a time."""
    ends = np.searchsorted(offsets, np.arange(GAIN_ROWS, offsets[-1], GAIN_ROWS))
    cuts = np.unique(np.concatenate(([0], offsets[ends], [offsets[-1]])))
    for a, b in zip(cuts[:-1].tolist(), cuts[1:].tolist()):
        keys = queries[a:b].astype(np.int64)  # (query, item) as one number
        keys *= items
        keys += codes[a:b]
        keys.sort()
        if (keys[1:] == keys[:-1]).any():
            return True
    return False


def _sort_positions(vocabulary: Any) -> np.ndarray:
    """Position of each item id in sorted order (UTF-8 byte order = str order)."""
    import pyarrow.compute as pc

    order = pc.array_sort_indices(vocabulary).to_numpy()
    out = np.empty(order.size, dtype=np.int32)
    out[order] = np.arange(order.size, dtype=np.int32)
    return out


def _put_in_rank_order(queries: np.ndarray, codes: np.ndarray, scores: np.ndarray,
                       item_rank: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Sort the queries whose lines are not already score desc, item id desc.

    Runs are nearly always written in that order, so only the few queries with rising
    scores or ties out of item order are sorted.
    """
    same = queries[1:] == queries[:-1]
    tied = np.flatnonzero(same & (scores[:-1] == scores[1:]))
    tied = tied[item_rank[codes[tied]] < item_rank[codes[tied + 1]]]
    bad = np.concatenate((np.flatnonzero(same & (scores[:-1] < scores[1:])), tied))
    del same, tied
    if bad.size == 0:
        return codes, scores
    wrong = np.zeros(int(queries[-1]) + 1, dtype=bool)
    wrong[queries[bad]] = True
    rows = np.flatnonzero(wrong[queries])
    order = np.lexsort((-item_rank[codes[rows]], -scores[rows], queries[rows]))
    codes[rows] = codes[rows[order]]
    scores[rows] = scores[rows[order]]
    return codes, scores


# --- scoring -------------------------------------------------------------------------------------

def judged_gains(qrels: Mapping[str, Mapping[str, int]], qids: Sequence[str],
                 run: RankedColumns, width: int) -> np.ndarray:
    """Gains matrix (qrels queries x ``width`` ranks): the grade of each ranked item,
    0 when unjudged, negative or past the end of the ranking."""
    import pyarrow as pa
    import pyarrow.compute as pc

    gains = np.zeros((len(qids), max(width, 1)), dtype=np.float64)
    where = np.fromiter((run.position(q) for q in qids), dtype=np.int64, count=len(qids))
    judged_q, judged_items, grades = [], [], []
    for i, q in enumerate(qids):
        if where[i] >= 0:
            for item, g in qrels[q].items():
                if g > 0:
                    judged_q.append(where[i])
                    judged_items.append(item)
                    grades.append(g)
    if not grades:
        return gains
    nv = len(run.vocabulary)
    code = pc.index_in(pa.array(judged_items, pa.string()), value_set=run.vocabulary)
    code = pc.fill_null(code, -1).to_numpy().astype(np.int64)
    known = code >= 0
    keys = np.asarray(judged_q, dtype=np.int64)[known] * nv + code[known]
    order = np.argsort(keys)
    keys, values = keys[order], np.asarray(grades, dtype=np.float64)[known][order]
    judged_item = np.zeros(nv, dtype=bool)
    judged_item[code[known]] = True
    if keys.size == 0:
        return gains
    rows = np.flatnonzero(where >= 0)
    lengths = np.minimum(np.diff(run.offsets)[where[rows]], width)
    block = np.concatenate(([0], np.flatnonzero(np.diff(np.cumsum(lengths) // GAIN_ROWS)) + 1,
                            [rows.size]))
    for a, b in zip(block[:-1], block[1:]):
        _fill(gains, run, rows[a:b], where[rows[a:b]], lengths[a:b], judged_item, keys, values)
    return gains


def _fill(gains: np.ndarray, run: RankedColumns, rows: np.ndarray, runq: np.ndarray,
          lengths: np.ndarray, judged_item: np.ndarray, keys: np.ndarray,
          values: np.ndarray) -> None:
    """Gains of the top ``lengths`` lines of run queries ``runq`` into ``gains[rows]``."""
    total = int(lengths.sum())
    if total == 0:
        return
    before = np.cumsum(lengths) - lengths
    rank = np.arange(total, dtype=np.int64) - np.repeat(before, lengths)
    line = np.repeat(run.offsets[runq], lengths) + rank
    item = run.codes[line]
    hit = np.flatnonzero(judged_item[item])
    key = np.repeat(runq, lengths)[hit] * len(run.vocabulary) + item[hit]
    at = np.minimum(np.searchsorted(keys, key), keys.size - 1)
    found = keys[at] == key
    target = np.repeat(rows, lengths)[hit[found]]
    gains[target, rank[hit[found]]] = values[at[found]]

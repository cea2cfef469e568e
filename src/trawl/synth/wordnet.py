"""A small reader for the WordNet 3.0 database files (format: wndb(5), morphy(7WN)).

Reads ``index.*``, ``data.*``, ``*.exc`` and ``cntlist.rev`` straight from a folder such
as Debian's ``/usr/share/wordnet`` (package ``wordnet-base``), so no extra Python package
or corpus download is needed. Only what paraphrasing uses is kept: senses in frequency
order with their tagged counts, lemmas and hypernyms.
"""

from __future__ import annotations

import bisect
from dataclasses import dataclass
from pathlib import Path

DEFAULT_DIRS = (Path("/usr/share/wordnet"), Path("/usr/local/share/wordnet"),
                Path("/usr/share/wordnet-3.0/dict"))
POS_FILES = {"n": "noun", "v": "verb", "a": "adj", "r": "adv"}

# Detachment rules of morphy(7WN): suffix -> replacement, per part of speech.
DETACH = {
    "n": (("s", ""), ("ses", "s"), ("xes", "x"), ("zes", "z"), ("ches", "ch"),
          ("shes", "sh"), ("men", "man"), ("ies", "y")),
    "v": (("s", ""), ("ies", "y"), ("es", "e"), ("es", ""), ("ed", "e"), ("ed", ""),
          ("ing", "e"), ("ing", "")),
    "a": (("er", ""), ("est", ""), ("er", "e"), ("est", "e")),
    "r": (),
}


@dataclass(frozen=True)
class Synset:
    lemmas: tuple[str, ...]
    hypernyms: tuple[tuple[str, int], ...]  # (pos, offset)


class WordNet:
    """Senses per lemma (most frequent first) and the synsets they point to.

    The files are read into memory whole but parsed only where looked up: a synset
    offset is its byte position in ``data.*`` (wndb(5)), and ``index.*`` is sorted, so
    loading takes a fraction of a second and a query set touches a few thousand lines.
    """

    def __init__(self, folder: Path) -> None:
        self.folder = str(folder)
        self._index: dict[str, tuple[list[bytes], list[bytes]]] = {}
        self._data: dict[str, bytes] = {}
        self.exceptions: dict[str, dict[str, str]] = {}
        for pos, name in POS_FILES.items():
            lines = [ln for ln in _read(folder / f"index.{name}").split(b"\n")
                     if ln and not ln.startswith(b" ")]
            self._index[pos] = ([ln.split(b" ", 1)[0] for ln in lines], lines)
            self._data[pos] = _read(folder / f"data.{name}")
            self.exceptions[pos] = _read_exc(folder / f"{name}.exc")
        self._senses: dict[tuple[str, str], tuple[int, tuple[int, ...]]] = {}
        self._counts: dict[tuple[str, str], dict[int, int]] | None = None
        self._synsets: dict[tuple[str, int], Synset | None] = {}

    def senses(self, lemma: str, pos: str) -> tuple[int, ...]:
        """Synset offsets of ``lemma`` (WordNet's spelling: spaces as '_'), most frequent first."""
        return self._entry(lemma, pos)[1]

    def tagged(self, lemma: str, pos: str) -> int:
        """How often ``lemma`` was seen in this part of speech in WordNet's tagged corpus
        (``tagsense_cnt``), which tells a word's usual part of speech."""
        return self._entry(lemma, pos)[0]

    def usual_pos(self, word: str) -> str | None:
        """The part of speech ``word`` is most often used in (ties: n, v, a, r)."""
        best, best_count = None, -1
        for pos in POS_FILES:
            bases = self.base_forms(word, pos)
            if bases:
                count = self.tagged(bases[0], pos)
                if count > best_count:
                    best, best_count = pos, count
        return best

    def _entry(self, lemma: str, pos: str) -> tuple[int, tuple[int, ...]]:
        key = (lemma, pos)
        if key not in self._senses:
            keys, lines = self._index[pos]
            raw = lemma.replace(" ", "_").encode()
            k = bisect.bisect_left(keys, raw)
            self._senses[key] = (_parse_index(lines[k].decode()) if k < len(keys)
                                 and keys[k] == raw else (0, ()))
        return self._senses[key]

    def synset(self, pos: str, offset: int) -> Synset | None:
        key = (pos, offset)
        if key not in self._synsets:
            data = self._data[pos]
            end = data.find(b"\n", offset)
            line = data[offset: end if end >= 0 else len(data)].decode("utf-8", "replace")
            self._synsets[key] = (_parse_data(line) if line.startswith(f"{offset:08d} ")
                                  else None)
        return self._synsets[key]

    def base_forms(self, word: str, pos: str) -> list[str]:
        """Lemmas ``word`` can be an inflection of (morphy's exception list, then rules)."""
        out: list[str] = []
        for cand in (self.exceptions.get(pos, {}).get(word), word):
            if cand and cand not in out and self.senses(cand, pos):
                out.append(cand)
        for suffix, repl in DETACH[pos]:
            if word.endswith(suffix) and len(word) > len(suffix) + 1:
                cand = word[: len(word) - len(suffix)] + repl
                if cand not in out and self.senses(cand, pos):
                    out.append(cand)
        return out

    def sense_counts(self, lemma: str, pos: str) -> tuple[int, ...]:
        """How often each sense of ``lemma`` (in ``senses`` order) was seen in WordNet's
        tagged corpus (``cntlist.rev``, cntlist(5WN)); zeros when the file is missing."""
        if self._counts is None:
            self._counts = _read_counts(Path(self.folder) / "cntlist.rev")
        got = self._counts.get((lemma.replace(" ", "_"), pos), {})
        return tuple(got.get(k, 0) for k in range(1, len(self.senses(lemma, pos)) + 1))


def find_wordnet(folder: str | Path | None = None) -> Path | None:
    """The first folder holding WordNet's ``index.noun`` and ``data.noun``, or None."""
    for d in [Path(folder)] if folder else DEFAULT_DIRS:
        if (d / "index.noun").is_file() and (d / "data.noun").is_file():
            return d
    return None


def load_wordnet(folder: str | Path | None = None) -> WordNet | None:
    """Load WordNet from ``folder`` (or the usual places); None when it is not installed."""
    d = find_wordnet(folder)
    return None if d is None else WordNet(d)


def _read(path: Path) -> bytes:
    return path.read_bytes() if path.is_file() else b""


def _parse_index(line: str) -> tuple[int, tuple[int, ...]]:
    # lemma pos synset_cnt p_cnt [ptr_symbol...] sense_cnt tagsense_cnt offset...
    f = line.split()
    n_syn, n_ptr = int(f[2]), int(f[3])
    return int(f[4 + n_ptr + 1]), tuple(int(o) for o in f[4 + n_ptr + 2:][:n_syn])


def _parse_data(line: str) -> Synset:
    # offset lex_filenum ss_type w_cnt(hex) [word lex_id]... p_cnt [sym offset pos src/tgt]...
    f = line.split(" | ", 1)[0].split()
    n_words = int(f[3], 16)
    lemmas = tuple(_lemma(f[4 + 2 * k]) for k in range(n_words))
    at = 4 + 2 * n_words
    hyper = []
    for k in range(int(f[at])):
        sym, off, p = f[at + 1 + 4 * k: at + 4 + 4 * k]
        if sym in ("@", "@i"):
            hyper.append(("a" if p == "s" else p, int(off)))
    return Synset(lemmas, tuple(hyper))


def _lemma(raw: str) -> str:
    # adjective markers such as "(a)" and "(p)" follow the word; underscores join words
    word = raw.split("(", 1)[0]
    return word.replace("_", " ").lower()


SS_TYPES = {"1": "n", "2": "v", "3": "a", "4": "r", "5": "a"}


def _read_counts(path: Path) -> dict[tuple[str, str], dict[int, int]]:
    # sense_key sense_number tag_cnt; sense_key = lemma%ss_type:lex_filenum:lex_id:head:id
    out: dict[tuple[str, str], dict[int, int]] = {}
    for line in _read(path).decode("utf-8", "replace").split("\n"):
        f = line.split()
        if len(f) != 3 or "%" not in f[0] or not (f[1].isdigit() and f[2].isdigit()):
            continue
        lemma, _, rest = f[0].partition("%")
        pos = SS_TYPES.get(rest[:1])
        if pos:
            slot = out.setdefault((lemma.lower(), pos), {})
            slot[int(f[1])] = slot.get(int(f[1]), 0) + int(f[2])
    return out


def _read_exc(path: Path) -> dict[str, str]:
    out: dict[str, str] = {}
    for line in _read(path).decode("utf-8", "replace").split("\n"):
        f = line.split()
        if len(f) >= 2:
            out.setdefault(f[0], f[1])
    return out

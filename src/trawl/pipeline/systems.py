"""What is evaluated: named systems, each one encoder spec or a fusion of other systems.

A spec is parsed here once; the parsed ``EncoderSpec`` travels on to indexing and the
embedding cache, so nothing further down parses the text again. A system may also say how
its index keeps vectors (``;store=int8``, ``;store=binary[;rescore=fp32]``); its default
name then says the vectors are quantised (``minilm.vectors-int8``), apart from a
quantised model (``minilm-int8``).
"""

from __future__ import annotations

import re
from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from ..errors import UsageError
from ..retrievers.spec import EncoderSpec, parse_spec
from ..stores import StoreSettings

NAME_CHARS = re.compile(r"[^A-Za-z0-9._+-]+")
STORE_OPTIONS = ("store", "rescore")


@dataclass(frozen=True)
class System:
    """A named system: one encoder spec, or a fusion of other systems (``parts``)."""

    name: str
    spec: EncoderSpec | None
    parts: tuple[str, ...] = ()
    store: StoreSettings = StoreSettings()


def clean_name(text: str) -> str:
    """A system name usable as a file name and a TREC run tag (no spaces)."""
    return NAME_CHARS.sub("-", text).strip("-") or "system"


def parse_system(value: str, check_paths: bool = True) -> System:
    """``SPEC`` or ``NAME=SPEC``; the default name is the spec with folders shortened."""
    head, eq, rest = value.partition("=")
    if eq and head and not any(c in head for c in ":;"):
        name, spec_text = head.strip(), rest
        if clean_name(name) != name or "+" in name:
            raise UsageError(f"system name {name!r} may only use letters, digits and . _ - "
                             "('+' joins the systems of a --fuse)")
    else:
        name, spec_text = "", value
    spec_text, store = _peel_store(spec_text)
    spec = parse_spec(spec_text, check_paths=check_paths)
    if spec.lexical and store.kind != "fp32":
        raise UsageError(f"{value!r}: store={store.kind} applies to dense encoders; bm25 keeps "
                         "an inverted index, not vectors")
    if not name:
        shown = str(spec)
        if spec.path:
            shown = shown.replace(f"{spec.kind}:{spec.path}", f"{spec.kind}-{Path(spec.path).name}")
        name = clean_name(shown) + store_suffix(store)
    return System(name, spec, store=store)


def stemming(systems: Sequence[System]) -> list[str]:
    """Names of the systems that stem words (a lexical spec with ``stem``) or fuse one
    that does: silver judgments overrate them (``silver.STEMMING_CAUTION``)."""
    stems = {s.name for s in systems
             if s.spec is not None and s.spec.lexical and s.spec.stem != "none"}
    # a fusion's parts are encoder systems (plan_systems), never other fusions
    return [s.name for s in systems if s.name in stems or stems.intersection(s.parts)]


def quantised(s: System) -> str:
    """What an encoder system runs or keeps quantised: none, model, vectors or both."""
    model = s.spec is not None and s.spec.quantised_model
    vectors = s.store.kind != "fp32"
    return ("model and vectors" if model and vectors else "model" if model
            else "vectors" if vectors else "none")


def store_suffix(store: StoreSettings) -> str:
    """What a default system name adds for quantised vectors: '' for fp32."""
    if store.kind == "fp32":
        return ""
    extra = f"-{store.rescore}" if store.kind == "binary" and store.rescore != "int8" else ""
    return f".vectors-{store.kind}{extra}"


def _peel_store(text: str) -> tuple[str, StoreSettings]:
    """The spec without its ``store=``/``rescore=`` options, and the store they ask for."""
    head, *opts = text.split(";")
    kept, found = [head], {}
    for opt in opts:
        key, eq, value = opt.partition("=")
        if eq and key.strip().lower() in STORE_OPTIONS:
            found[key.strip().lower()] = value.strip().lower()
        else:
            kept.append(opt)
    if "rescore" in found and found.get("store") != "binary":
        raise UsageError(f"{text!r}: rescore= applies to store=binary only")
    return ";".join(kept), StoreSettings(found.get("store", "fp32"), found.get("rescore", "int8"))


def plan_systems(encoders: Sequence[str], fuse: Sequence[str] = (),
                 check_paths: bool = True) -> list[System]:
    """Encoder systems then fused ones (``A+B`` of encoder systems, by name or spec);
    names unique."""
    if not encoders:
        raise UsageError("no encoders given; add at least one -e SPEC, e.g. -e minilm -e bm25")
    systems = [parse_system(e, check_paths) for e in encoders]
    by_name = {s.name: s for s in systems}
    if len(by_name) != len(systems):
        dup = next(n for n, c in Counter(s.name for s in systems).items() if c > 1)
        raise UsageError(f"two encoders are both named {dup!r}; name them apart with "
                         f"-e NAME=SPEC")
    by_spec = {str(s.spec): s.name for s in systems}
    for f in fuse:
        names = _fused_parts(f, by_name, by_spec)
        fused = System("+".join(names), None, tuple(names))
        if any(s.name == fused.name for s in systems):
            raise UsageError(f"--fuse {f!r} is given twice")
        systems.append(fused)
    return systems


def _fused_parts(fuse: str, by_name: dict[str, System], by_spec: dict[str, str]) -> list[str]:
    """The system names an ``A+B`` value joins; each part a system name or its spec."""
    parts = [p.strip() for p in fuse.split("+")]
    if len(parts) < 2 or not all(parts):
        raise UsageError(f"--fuse {fuse!r}: give two or more systems joined by '+', "
                         "e.g. --fuse minilm+bm25")
    names = []
    for p in parts:
        if p in by_name:
            names.append(p)
            continue
        try:
            canonical = str(parse_spec(p, check_paths=False))
        except UsageError:
            canonical = None
        if canonical not in by_spec:
            raise UsageError(f"--fuse {fuse!r}: {p!r} is not one of the systems given with "
                             f"-e ({', '.join(by_name)})")
        names.append(by_spec[canonical])
    return names

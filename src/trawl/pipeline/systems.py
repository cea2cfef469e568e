"""What is evaluated: named systems, each one encoder spec or a fusion of other systems.

A spec is parsed here once; the parsed ``EncoderSpec`` travels on to indexing and the
embedding cache, so nothing further down parses the text again.
"""

from __future__ import annotations

import re
from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from ..errors import UsageError
from ..retrievers.spec import EncoderSpec, parse_spec

NAME_CHARS = re.compile(r"[^A-Za-z0-9._+-]+")


@dataclass(frozen=True)
class System:
    """A named system: one encoder spec, or a fusion of other systems (``parts``)."""

    name: str
    spec: EncoderSpec | None
    parts: tuple[str, ...] = ()


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
    spec = parse_spec(spec_text, check_paths=check_paths)
    if not name:
        shown = str(spec)
        if spec.path:
            shown = shown.replace(f"{spec.kind}:{spec.path}", f"{spec.kind}-{Path(spec.path).name}")
        name = clean_name(shown)
    return System(name, spec)


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

"""What a synthesis run is asked for: one frozen value object, checked before any work.

Resources that are loaded or connected (WordNet, a lexicon, a chat client, real queries
to calibrate on, the embedding cache) are passed to ``synthesise`` beside it.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from ..errors import UsageError
from .grading import RELATED_GRADE, SOURCE_GRADE
from .neighbours import NEIGHBOUR_SPECS
from .overlap import OverlapProfile
from .typo import DEFAULT_RATE

STYLES = ("keyword", "question", "paraphrase", "typo", "llm")
DEFAULT_MIX = {"paraphrase": 1.0}
FALLBACK_MIX = {"question": 1.0, "keyword": 1.0}  # default when paraphrasing is impossible


@dataclass(frozen=True)
class SynthSettings:
    """How many queries, in which styles, how close to their items, judged how.

    ``styles`` is a mix such as ``"keyword,paraphrase:3"`` (None: the default mix).
    ``profile`` is the overlap profile (None: the default, or one calibrated on real
    queries when those are given); ``max_overlap`` overrides its ceiling.
    ``check_with`` names encoders whose fused top ``check_depth`` must hold a query's
    source for it to be kept. Items every encoder in ``neighbours`` places among a
    source's ``neighbour_depth`` nearest (None: see ``neighbours.neighbour_depth``) are
    judged at ``related_grade``; ``neighbours=()`` turns that off.
    """

    per_item: int = 1
    sample: int | None = None
    styles: str | Mapping[str, float] | Sequence[str] | None = None
    seed: int = 0
    profile: OverlapProfile | None = None
    max_overlap: float | None = None
    check_with: tuple[str, ...] = ()
    check_depth: int = 20
    typo_rate: float = DEFAULT_RATE
    source_grade: int = SOURCE_GRADE
    related_grade: int = RELATED_GRADE
    neighbours: tuple[str, ...] = NEIGHBOUR_SPECS
    neighbour_depth: int | None = None
    qid_prefix: str = "syn"

    def check(self) -> None:
        """Refuse values no run can use, naming the setting and what is allowed."""
        if self.per_item < 1:
            raise UsageError(f"per_item={self.per_item} must be >= 1")
        if self.sample is not None and self.sample < 1:
            raise UsageError(f"sample={self.sample} must be >= 1")
        if not 0 <= self.typo_rate <= 1:
            raise UsageError(f"typo rate {self.typo_rate} must be between 0 and 1")
        if self.related_grade < 0 or self.source_grade < 1 \
                or self.related_grade >= self.source_grade:
            raise UsageError(f"grades must satisfy 0 <= related ({self.related_grade}) < "
                             f"source ({self.source_grade})")
        if self.max_overlap is not None and not 0 < self.max_overlap <= 1:
            raise UsageError(f"max overlap {self.max_overlap} must be in (0, 1]")
        if self.neighbours and self.neighbour_depth is not None and self.neighbour_depth < 1:
            raise UsageError(f"neighbour depth {self.neighbour_depth} must be >= 1")
        if self.check_with and self.check_depth < 1:
            raise UsageError(f"check depth {self.check_depth} must be >= 1")


def parse_mix(styles: str | Mapping[str, float] | Sequence[str] | None) -> dict[str, float]:
    """Style weights from 'keyword,paraphrase:3' (weight 1 when omitted), a list or a dict."""
    if styles is None:
        return dict(DEFAULT_MIX)
    if isinstance(styles, Mapping):
        pairs = list(styles.items())
    else:
        parts = styles.split(",") if isinstance(styles, str) else list(styles)
        pairs = []
        for p in (x.strip() for x in parts):
            if not p:
                continue
            name, _, w = p.partition(":")
            try:
                weight = float(w) if w else 1.0
            except ValueError:
                raise UsageError(f"style weight {w!r} in {p!r} is not a number; "
                                 "write e.g. 'paraphrase:3'") from None
            pairs.append((name.strip(), weight))
    mix: dict[str, float] = {}
    for name, weight in pairs:
        if name not in STYLES:
            raise UsageError(f"unknown query style {name!r}; choose from {', '.join(STYLES)}")
        if weight < 0:
            raise UsageError(f"style weight for {name!r} is {weight}; weights must be >= 0")
        mix[name] = mix.get(name, 0.0) + float(weight)
    mix = {k: v for k, v in mix.items() if v > 0}
    if not mix:
        raise UsageError("no query style with a positive weight; give e.g. "
                         "'keyword,paraphrase'")
    return mix

"""One stratified sampler: draw ``n`` members so every destination type keeps its share.

Synthesis samples catalogue items and review samples queries with the same rule, so a
sample of either looks like the whole:

1. Each type's exact share is ``n * size / total``; it gets the whole part of it.
2. When ``n`` is at least the number of types, a type left with none gets one.
3. Slots still free go to the largest fractional parts (ties: type name), never to a
   type that has no member left.
4. If step 2 gave out more than ``n`` slots, they are taken back one at a time from the
   type furthest above its exact share (ties: type name) among those holding more than
   one, so every type keeps at least one.

Within a type the members are drawn at random from a generator seeded by ``seed`` and
the type's name, so one type's draw does not depend on the others. The sample keeps the
input order.
"""

from __future__ import annotations

import math
import random
from collections.abc import Callable, Mapping, Sequence
from typing import TypeVar

from .errors import UsageError

T = TypeVar("T")


def allocate(sizes: Mapping[str, int], n: int, *, at_least_one: bool = True) -> dict[str, int]:
    """How many of ``n`` slots each type gets (the rule in the module docstring);
    ``at_least_one=False`` skips step 2, leaving plain largest-remainder allocation."""
    total = sum(sizes.values())
    types = sorted(sizes)
    if n >= total:
        return {t: sizes[t] for t in types}
    share = {t: n * sizes[t] / total for t in types}
    alloc = {t: math.floor(share[t]) for t in types}
    if at_least_one and n >= len(types):
        alloc = {t: max(alloc[t], 1) for t in types}
    spare = n - sum(alloc.values())
    for t in sorted(types, key=lambda t: (-(share[t] - math.floor(share[t])), t)):
        if spare <= 0:
            break
        if alloc[t] < sizes[t]:
            alloc[t] += 1
            spare -= 1
    while sum(alloc.values()) > n:
        t = min((t for t in types if alloc[t] > 1), key=lambda t: (share[t] - alloc[t], t))
        alloc[t] -= 1
    return alloc


def stratified_sample(members: Sequence[T], type_of: Callable[[T], str], n: int | None,
                      seed: int) -> list[T]:
    """``n`` of ``members`` stratified by ``type_of`` (all of them when ``n`` is None or
    not below their number), in input order; the same seed gives the same sample."""
    if n is None or n >= len(members):
        return list(members)
    if n < 1:
        raise UsageError(f"sample={n} must be >= 1")
    groups: dict[str, list[int]] = {}
    for pos, member in enumerate(members):
        groups.setdefault(type_of(member), []).append(pos)
    quota = allocate({t: len(g) for t, g in groups.items()}, n)
    chosen: set[int] = set()
    for t, positions in groups.items():
        chosen.update(random.Random(f"{seed}:sample:{t}").sample(positions, quota[t]))
    return [members[pos] for pos in sorted(chosen)]

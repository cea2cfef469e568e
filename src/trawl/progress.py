"""Progress bars on stderr for work that takes more than a second; silent with --quiet."""

from __future__ import annotations

from tqdm.auto import tqdm


def progress(total: int | None = None, desc: str = "", quiet: bool = False, unit: str = "it"):
    """A tqdm bar on stderr; disabled when ``quiet`` so output stays scriptable."""
    return tqdm(total=total, desc=desc, disable=quiet, unit=unit, leave=False,
                dynamic_ncols=True)

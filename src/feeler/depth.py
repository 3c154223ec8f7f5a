"""How many cases a run draws: the depth levels ``quick``, ``standard`` and ``deep``.

The depth sets the number of sampled (non-boundary) go cases per tool, the *samples*. The default is
``standard`` everywhere (the command line, the pytest plugin, locally and in CI), so a run on a laptop
draws the same cases as the CI run with the same sample seed. ``--samples N`` overrides the depth.
"""

from __future__ import annotations

from feeler.errors import UsageError

__all__ = ["DEFAULT_DEPTH", "DEPTHS", "OLD_PROFILES", "samples_for"]

#: depth -> sampled go cases per tool
DEPTHS: dict[str, int] = {"quick": 10, "standard": 20, "deep": 500}
DEFAULT_DEPTH = "standard"
#: the former ``--feeler-profile`` / ``profile`` values, read for one release
OLD_PROFILES: dict[str, str] = {"dev": "quick", "ci": "standard", "nightly": "deep"}


def samples_for(depth: str | None) -> int:
    """The samples per tool at *depth* (``None``: the default depth)."""
    name = depth or DEFAULT_DEPTH
    name = OLD_PROFILES.get(name, name)
    if name not in DEPTHS:
        raise UsageError(f"depth={depth!r} must be one of {', '.join(DEPTHS)}")
    return DEPTHS[name]

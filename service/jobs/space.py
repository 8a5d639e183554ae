"""Free space of the data directory: readiness and new jobs need a configured minimum.

Below ``HAARLINE_MIN_FREE_BYTES`` the service says so before it runs out (a 503 with
``Retry-After``), rather than accepting work it may not be able to store.
"""

from __future__ import annotations

from haarline.service.errors import Unavailable
from haarline.service.jobs.store import Store
from haarline.service.settings import Settings

__all__ = ["require_free_space"]


def require_free_space(store: Store, settings: Settings) -> tuple[int, int]:
    """Return ``(free, minimum)`` in bytes, or raise the low-disk-space 503.

    Raises
    ------
    Unavailable
        When the data directory has less free space than ``settings.min_free_bytes``.
    """
    free, least = store.free_bytes(), settings.min_free_bytes
    if free < least:
        raise Unavailable(
            f"the data directory has {_size(free)} free, below the minimum of {_size(least)} "
            "(HAARLINE_MIN_FREE_BYTES)",
            kind="low-disk-space",
            free_bytes=free,
            min_free_bytes=least,
        )
    return free, least


def _size(count: int) -> str:
    """Bytes for people: ``512 B``, ``63.9 MiB``, ``1.5 TiB``."""
    value = float(count)
    for unit in ("B", "KiB", "MiB", "GiB"):
        if value < 1024:
            return f"{count} B" if unit == "B" else f"{value:.1f} {unit}"
        value /= 1024
    return f"{value:.1f} TiB"

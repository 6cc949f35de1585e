"""The one pint registry of the process, made on first use (pint is slow to import)."""

from __future__ import annotations

import functools
from typing import Any


@functools.lru_cache(maxsize=1)
def registry() -> Any:
    """Return the shared pint ``UnitRegistry``, creating it on the first call.

    Examples
    --------
    >>> ureg = registry()
    >>> round(ureg.Quantity("1 mbar").to("Pa").magnitude, 9)
    100.0
    """
    import pint

    return pint.UnitRegistry()

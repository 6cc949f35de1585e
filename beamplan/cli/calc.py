"""Stand-alone physics calculators (``beamplan calc ...``); filled in by its own module."""

from __future__ import annotations

from typing import Any


def register(sub: Any) -> None:
    """Add the ``calc`` command group (placeholder until the calculators land)."""

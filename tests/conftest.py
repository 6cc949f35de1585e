"""Shared test helpers: paths, and building layouts from YAML text."""

from __future__ import annotations

import os
import pathlib

import pytest
from hypothesis import settings

# Property tests are reproducible by default (CI must not fail at random); run
# HYPOTHESIS_PROFILE=explore python -m pytest to search with fresh random examples.
settings.register_profile("beamplan", derandomize=True, database=None, deadline=None)
settings.register_profile("explore", derandomize=False, deadline=None, max_examples=200)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "beamplan"))

ROOT = pathlib.Path(__file__).resolve().parent.parent
LAYOUTS = ROOT / "layouts"


@pytest.fixture(autouse=True)
def _run_from_root(monkeypatch: pytest.MonkeyPatch) -> None:
    """Doctests and tests use paths relative to the project root."""
    monkeypatch.chdir(ROOT)
    monkeypatch.setenv("NO_COLOR", "1")
    os.environ.pop("BEAMPLAN_DEBUG", None)


def layout_from_text(text: str, name: str = "test.yaml"):  # type: ignore[no-untyped-def]
    """Parse YAML text into a schema-checked Layout."""
    from beamplan.layout.loader import parse_layout
    from beamplan.layout.yamlpos import parse_yaml

    return parse_layout(parse_yaml(text, name))


def network_from_text(text: str, name: str = "test.yaml"):  # type: ignore[no-untyped-def]
    """Parse YAML text into a checked Network."""
    from beamplan.network.graph import build_network

    return build_network(layout_from_text(text, name))

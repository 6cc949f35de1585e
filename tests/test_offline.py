"""The layout key ``offline`` takes a source, element or scanner out of use.

``in_service`` is not a key: a layout that still writes it gets one located
error that names ``offline``.
"""

from __future__ import annotations

import pathlib

import pytest

import beamplan
from beamplan.errors import LayoutError

LAYOUT = """\
layout: offline-demo
format: 1
sources:
  fel: {{power: 10 kW{source}}}
elements:
  t1:
    kind: splitter
    outputs: {{a: {{fraction: 0.5}}, b: {{fraction: 0.5}}}}
  m1: {{kind: mirror, reflectivity: 0.9{element}}}
scanners:
  litho-1: {{power: 500 W{scanner}}}
  litho-2: {{power: 500 W}}
beamlines:
  - fel -> t1
  - t1.a -> m1 -> litho-1
  - t1.b -> litho-2
"""


def _write(tmp_path: pathlib.Path, **extra: str) -> str:
    path = tmp_path / "offline.yaml"
    fields = {"source": "", "element": "", "scanner": ""}
    fields.update({k: f", {v}" for k, v in extra.items()})
    path.write_text(LAYOUT.format(**fields), encoding="utf-8")
    return str(path)


def test_offline_defaults_to_false(tmp_path: pathlib.Path) -> None:
    layout = beamplan.load(_write(tmp_path))
    assert all(x.in_use for x in (*layout.sources, *layout.elements, *layout.scanners))


@pytest.mark.parametrize("where", ["source", "element", "scanner"])
def test_offline_true_takes_the_part_out_of_use(tmp_path: pathlib.Path, where: str) -> None:
    layout = beamplan.load(_write(tmp_path, **{where: "offline: true"}))
    group = {"source": layout.sources, "element": layout.elements,
             "scanner": layout.scanners}[where]
    offline = [x.id for x in group if not x.in_use]
    assert offline == [{"source": "fel", "element": "m1", "scanner": "litho-1"}[where]]
    again = beamplan.load(_write(tmp_path, **{where: "offline: false"}))
    assert all(x.in_use for x in (*again.sources, *again.elements, *again.scanners))


def test_an_offline_mirror_passes_nothing(tmp_path: pathlib.Path) -> None:
    result = beamplan.plan(_write(tmp_path, element="offline: true"))
    delivered = {s.id: s.delivered_w for s in result.scanners}
    # Hand calculation: m1 passes nothing, so litho-1 gets 0 W; litho-2 still gets its need.
    assert delivered["litho-1"] == 0.0
    assert delivered["litho-2"] >= 500.0


@pytest.mark.parametrize(("where", "noun", "line", "column"), [
    ("source", "a source", 4, 23),     # hand count (string search on the line)
    ("element", "an element", 9, 41),  # '  m1: {kind: mirror, reflectivity: 0.9, in_service'
    ("scanner", "a scanner", 11, 27),  # '  litho-1: {power: 500 W, in_service'
])
def test_old_in_service_key_names_the_new_one(tmp_path: pathlib.Path, where: str, noun: str,
                                              line: int, column: int) -> None:
    path = _write(tmp_path, **{where: "in_service: false"})
    with pytest.raises(LayoutError) as caught:
        beamplan.load(path)
    [d] = [d for d in caught.value.diagnostics if d.is_error]
    assert d.code == "renamed-key"
    assert (d.location.line, d.location.column) == (line, column)  # type: ignore[union-attr]
    assert d.format().endswith(f"'in_service' is not a key; to take {noun} out of use "
                               "write 'offline: true'")


def test_offline_must_be_true_or_false(tmp_path: pathlib.Path) -> None:
    with pytest.raises(LayoutError) as caught:
        beamplan.load(_write(tmp_path, element="offline: maybe"))
    [d] = [d for d in caught.value.diagnostics if d.is_error]
    assert "'offline' must be true or false" in d.message

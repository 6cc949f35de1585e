"""beamplan's colours and heat bands, shared by every picture and page.

A module of its own at the foot of :mod:`beamplan.report`, so that the
diagram, the plots and the HTML pages can all import it without importing
each other.

Examples
--------
>>> PALETTE["ink"], [band[0] for band in HEAT_BANDS][:2]
('#1d2330', ['heat-1', 'heat-2'])
"""

from __future__ import annotations

__all__ = ["HEAT_BANDS", "PALETTE"]

#: beamplan's own palette. Lightness alone tells the heat bands apart (they
#: print in grey); hues run blue to brown, an axis that red-green colour
#: blindness keeps. tests/test_diagram.py checks both with simulated vision.
PALETTE = {
    "ink": "#1d2330", "paper": "#ffffff", "beam": "#4d7fb3", "idle": "#8a93a0",
    "bind": "#8e1f5e", "met": "#d6e6f4", "source": "#c9d5e3", "dump": "#d4d4d4",
    "heat-none": "#ffffff", "heat-1": "#f6dfb6", "heat-2": "#eab266", "heat-3": "#c8701f",
    "heat-4": "#6e3309",
}
#: (palette key, words, lowest use) of each heat band: absorbed ÷ heat limit.
HEAT_BANDS = (("heat-1", "under 50 %", 0.0), ("heat-2", "50–80 %", 0.5),
              ("heat-3", "80 % to just under the limit", 0.8), ("heat-4", "at the limit", 1 - 1e-6))

"""Terminal rendering of calculator documents: one display rule per JSON key.

The documents come from :mod:`beamplan.report.calc`; rich loads only here.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Mapping
from typing import TYPE_CHECKING, Any, NamedTuple

from beamplan.units import format_power

if TYPE_CHECKING:
    from rich.console import Group

__all__ = ["calc_renderable"]



class _Show(NamedTuple):
    label: str
    unit: str = ""
    fmt: Callable[[Any], str] = str
    none: str = "-"
    short: str = ""  # the column header of wide tables, when shorter than the label


def _g(scale: float = 1.0, digits: int = 4) -> Callable[[Any], str]:
    return lambda v: f"{v * scale:.{digits}g}"


_DEG = _g(180.0 / math.pi)
_NM = _g(1e9)
_MM = _g(1e3)
_SCI = _g(1.0, 4)


def _fix(v: float) -> str:
    """Reflectivities and transmissions: 5 decimals, scientific below 1e-3."""
    return "0" if v == 0 else f"{v:.5f}" if abs(v) >= 1e-3 else f"{v:.3e}"


def _pct(v: float) -> str:
    return f"{v * 100:.4g}"


def _capping(v: Mapping[str, Any]) -> str:
    return f"{v['formula']} {v['thickness_m'] * 1e9:.4g} nm"


def _densities(v: Mapping[str, float]) -> str:
    return ", ".join(f"{name} {rho:.4g} g/cm³" for name, rho in v.items()) or "tabulated"


_SHOW: dict[str, _Show] = {
    "coating": _Show("coating"),
    "density_g_cm3": _Show("density", "g/cm³", _g(), "tabulated"),
    "roughness_m": _Show("roughness (rms)", "nm", _NM),
    "polarisation": _Show("polarisation (+1 s, −1 p)", "", _g(1.0, 3)),
    "delta_beta": _Show("δ, β", "", lambda v: f"{v[0]:.5g}, {v[1]:.5g} (given)", "tables"),
    "grazing_rad": _Show("grazing", "deg", _DEG, short="θ"),
    "incidence_rad": _Show("incidence from normal", "deg", _DEG, short="θ"),
    "wavelength_m": _Show("wavelength", "nm", _NM, short="λ"),
    "reflectivity": _Show("R", "", _fix),
    "reflectivity_s": _Show("R_s", "", _fix),
    "reflectivity_p": _Show("R_p", "", _fix),
    "delta": _Show("δ", "", _SCI),
    "beta": _Show("β", "", _SCI),
    "critical_angle_rad": _Show("critical angle", "deg", _DEG, short="θc"),
    "absorber": _Show("absorber"),
    "spacer": _Show("spacer"),
    "period_m": _Show("period", "nm", _NM),
    "gamma": _Show("Γ (absorber share)", "", _g(1.0, 3)),
    "bilayers": _Show("bilayers"),
    "capping": _Show("capping", "", _capping, "none"),
    "substrate": _Show("substrate"),
    "densities_g_cm3": _Show("densities", "", _densities),
    "scan": _Show("scan"),
    "reference_wavelength_m": _Show("index taken at", "nm", _NM),
    "peak_reflectivity": _Show("peak R", "", _fix),
    "peak_wavelength_m": _Show("peak wavelength", "nm", _NM),
    "fwhm_m": _Show("bandwidth (FWHM)", "nm", _NM, "outside the scan"),
    "gas": _Show("gas"),
    "temperature_k": _Show("temperature", "K", _g()),
    "pressure_pa": _Show("pressure", "Pa", _g(), short="p"),
    "length_m": _Show("length", "m", _g(), short="L"),
    "transmission": _Show("transmission", "", _fix, short="T"),
    "number_density_m3": _Show("number density", "m⁻³", _SCI, short="n"),
    "cross_section_m2": _Show("cross-section", "m²", _SCI, short="σ"),
    "attenuation_length_m": _Show("1/e length", "m", _g(), "infinite", "1/e"),
    "recipe_dose_j_m2": _Show("recipe dose", "mJ/cm²", _g(0.1)),
    "wafers_per_hour": _Show("throughput", "wph", _g()),
    "if_power_w": _Show("IF power", "", format_power),
    "field_width_m": _Show("field width (slit length)", "mm", _MM),
    "field_length_m": _Show("field length", "mm", _MM),
    "fields_per_wafer": _Show("fields per wafer"),
    "slit_height_m": _Show("slit height", "mm", _MM),
    "wafer_overhead_s": _Show("wafer overhead", "s", _g()),
    "field_overhead_s": _Show("field overhead", "s", _g()),
    "stage_max_speed_m_s": _Show("stage maximum speed", "m/s", _g()),
    "mirror_reflections": _Show("mirror reflections"),
    "mirror_reflectivity": _Show("mirror reflectivity", "", _g()),
    "mask_reflectivity": _Show("mask reflectivity", "", _g()),
    "pellicle_transmission": _Show("pellicle transmission (one pass)", "", _g()),
    "other_losses_factor": _Show("other losses factor", "", _g()),
    "dose_control_margin": _Show("dose-control margin", "%", _pct),
    "stochastic": _Show("stochastic floor", none="not used"),
    "critical_area_m2": _Show("critical area", "nm²", _g(1e18)),
    "absorption_per_m": _Show("resist absorption", "1/µm", _g(1e-6)),
    "thickness_m": _Show("resist thickness", "nm", _NM),
    "noise_budget": _Show("shot-noise budget", "%", _pct),
    "dose_j_m2": _Show("dose used", "mJ/cm²", _g(0.1)),
    "dose_source": _Show("dose set by"),
    "stochastic_floor_j_m2": _Show("stochastic floor", "mJ/cm²", _g(0.1), ""),
    "absorbed_fraction": _Show("absorbed fraction", "", _g(), ""),
    "transmission_if_to_wafer": _Show("transmission IF → wafer", "%", _pct),
    "wafer_power_w": _Show("power at wafer", "", format_power),
    "scan_speed_m_s": _Show("scan speed", "m/s", _g()),
    "time_per_wafer_s": _Show("time per wafer", "s", _g(), "infinite"),
    "scan_time_per_field_s": _Show("scan time per field", "s", _g()),
    "stage_limited_wph": _Show("stage-limited throughput", "wph", _g()),
    "stage_limit_if_power_w": _Show("IF power where the stage limits", "", format_power),
    "limit": _Show("limit"),
    "electron_energy_ev": _Show("electron energy", "GeV", _g(1e-9, 6)),
    "harmonic": _Show("harmonic"),
    "target_wavelength_m": _Show("target wavelength", "nm", _NM, ""),
    "declared_wavelength_m": _Show("declared wavelength", "nm", _NM, ""),
    "tolerance": _Show("tolerance", "%", _pct, ""),
    "tunable": _Show("K is a maximum (tunable gap)", none=""),
    "reachable": _Show("reachable"),
    "lorentz_gamma": _Show("Lorentz factor γ", "", _g(1.0, 7)),
    "k": _Show("K", "", _g(1.0, 6)),
    "peak_field_t": _Show("peak field", "T", _g(1.0, 5)),
    "resonant_wavelength_m": _Show("resonant wavelength", "nm", _g(1e9, 6)),
    "photon_energy_ev": _Show("photon energy", "eV", _g(1.0, 5)),
    "relative_error": _Show("relative error", "%", lambda v: f"{v * 100:+.3g}"),
    "k_required": _Show("K required", "", _g(1.0, 6), "none (K² < 0)"),
    "peak_field_required_t": _Show("peak field required", "T", _g(1.0, 5), "-"),
    "shortest_wavelength_m": _Show("shortest (K = 0)", "nm", _g(1e9, 6)),
}

_TITLES = {"reflect": "Mirror reflectivity (thick single surface)",
           "multilayer": "Multilayer mirror reflectivity",
           "gas": "Gas-drift transmission",
           "demand": "Scanner demand", "undulator": "Undulator resonance"}


#: Where a key means something else in one calculator.
_SHOW_IN = {"undulator": {"period_m": _Show("undulator period", "mm", _MM)}}


def _show(key: str, calc: str = "") -> _Show:
    return _SHOW_IN.get(calc, {}).get(key) or _SHOW.get(key, _Show(key.replace("_", " ")))


def _cell(key: str, value: Any, *, unit: bool, calc: str = "") -> str:
    show = _show(key, calc)
    if value is None:
        return show.none
    if isinstance(value, bool):
        return "yes" if value else "no"
    text = show.fmt(value)
    return f"{text} {show.unit}" if unit and show.unit else text


def _pairs(items: Iterable[tuple[str, Any]], calc: str) -> list[tuple[str, str]]:
    """Label and value cells; a nested mapping (tool, stochastic floor) is spread out, and a
    None whose display text is empty (not applicable in this mode) is left out."""
    out: list[tuple[str, str]] = []
    for key, value in items:
        show = _show(key, calc)
        if isinstance(value, Mapping) and key in ("tool", "stochastic"):
            out += _pairs(value.items(), calc)
        elif value is not None or show.none:
            out.append((show.label, _cell(key, value, unit=True, calc=calc)))
    return out


def calc_renderable(document: Mapping[str, Any]) -> Group:
    """A calculator document as rich renderables: inputs, results, summary and method.

    A document with one row shows it as label/value pairs; with many rows, as a
    table with one row each, the columns that never change listed once above it.

    Examples
    --------
    >>> import io
    >>> from rich.console import Console
    >>> from beamplan.report.calc import gas_document
    >>> console = Console(file=io.StringIO(), width=80, color_system=None)
    >>> console.print(calc_renderable(gas_document("H2", [10.0], 300.0, [2.0, 4.0], 13.5e-9)))
    >>> "transmission" in console.file.getvalue()
    True
    """
    from rich import box
    from rich.console import Group
    from rich.table import Table
    from rich.text import Text

    parts: list[Any] = []
    name = str(document["format"]).removeprefix("beamplan-calc-").split("/")[0]

    def section(title: str, body: Any) -> None:
        parts.extend([Text(title, style="bold"), body, Text("")])

    def pairs(title: str, items: Iterable[tuple[str, Any]]) -> None:
        table = Table(box=None, show_header=False, padding=(0, 1, 0, 2))
        table.add_column(style="bold")
        table.add_column(overflow="fold")
        for label, value in _pairs(items, name):
            table.add_row(label, value)
        section(title, table)

    pairs(_TITLES.get(name, name), document["inputs"].items())
    rows: list[Mapping[str, Any]] = list(document.get("rows", []))
    if len(rows) == 1:
        pairs("Result", rows[0].items())
    elif rows:
        keys = list(rows[0])
        fixed = [k for k in keys if all(r[k] == rows[0][k] for r in rows)]
        if fixed:
            pairs("Same in every row", ((k, rows[0][k]) for k in fixed))
        table = Table(box=box.SIMPLE_HEAD, padding=(0, 1))
        varying = [k for k in keys if k not in fixed]
        for key in varying:
            show = _show(key, name)
            head = show.short or show.label
            table.add_column(f"{head} ({show.unit})" if show.unit else head, justify="right")
        for row in rows:
            table.add_row(*(_cell(k, row[k], unit=False, calc=name) for k in varying))
        section(f"Results ({len(rows)} rows)", table)
    if "result" in document:
        pairs("Result", document["result"].items())
    if document.get("peak"):
        pairs("Peak (wavelength scan)", document["peak"].items())
    if document.get("summary"):
        parts.append(Text(str(document["summary"]), style="bold"))
    parts.append(Text(f"Method: {document['method']}", style="dim"))
    return Group(*parts)

"""Views of calculator documents: the terminal (a header as given, then a table or a
line) and CSV (the points, or the result, one row each).

The documents come from :mod:`beamplan.report.calc`; rich loads only here.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from typing import TYPE_CHECKING, Any, NamedTuple

from beamplan.units import format_power

if TYPE_CHECKING:
    from rich.console import Group

__all__ = ["calc_csv", "calc_renderable"]


class _Show(NamedTuple):
    label: str
    unit: str = ""
    fmt: Callable[[Any], str] = str
    none: str = "-"


def _g(scale: float = 1.0, digits: int = 4) -> Callable[[Any], str]:
    return lambda v: f"{v * scale:.{digits}g}"


_NM = _g(1e9)
_MM = _g(1e3)
_SCI = _g(1.0, 4)


def _fix(v: float) -> str:
    """Reflectivities and transmissions: 5 decimals, scientific below 1e-3."""
    return "0" if v == 0 else f"{v:.5f}" if abs(v) >= 1e-3 else f"{v:.3e}"


def _pct(v: float) -> str:
    return f"{v * 100:.4g}"


_SHOW: dict[str, _Show] = {
    "grazing_deg": _Show("grazing", "°", _g()),
    "incidence_deg": _Show("incidence", "°", _g()),
    "wavelength_m": _Show("λ", "nm", _NM),
    "reflectivity": _Show("R", "", _fix),
    "reflectivity_s": _Show("R s-pol", "", _fix),
    "reflectivity_p": _Show("R p-pol", "", _fix),
    "delta": _Show("δ", "", _SCI),
    "beta": _Show("β", "", _SCI),
    "critical_grazing_deg": _Show("critical grazing", "°", _g()),
    "pressure_pa": _Show("p", "Pa", _g()),
    "length_m": _Show("L", "m", _g()),
    "transmission": _Show("T", "", _fix),
    "number_density_m3": _Show("n", "m⁻³", _SCI),
    "cross_section_m2": _Show("σ", "m²", _SCI),
    "attenuation_length_m": _Show("1/e length", "m", _g(), "infinite"),
    "bandwidth_fwhm_m": _Show("FWHM", "nm", _NM, "outside the scan"),
    "index_wavelength_m": _Show("mean index taken at", "nm", _NM),
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
    **{f"{key}_{plane}_{unit}": _Show(f"{label} {plane}", shown, _g(scale), none)
       for key, label, unit, shown, scale, none in (
           ("size", "rms size", "m", "mm", 1e3, "-"),
           ("divergence", "rms divergence", "rad", "µrad", 1e6, "-"),
           ("focal", "focal length", "m", "m", 1.0, "flat"),
           ("divergence_after", "divergence after", "rad", "µrad", 1e6, ""),
           ("waist_after", "waist after (− virtual)", "m", "m", 1.0, ""),
           ("waist_size_after", "waist size after", "m", "mm", 1e3, ""))
       for plane in ("tangential", "sagittal")},
    "distance_m": _Show("distance", "m", _g()),
    "footprint_rms_m": _Show("footprint rms", "mm", _MM),
    "footprint_fwhm_m": _Show("footprint FWHM", "mm", _MM),
    "accepted_fraction": _Show("accepted", "%", _pct),
    "clipped_fraction": _Show("clipped", "%", _pct),
    "power_on_mirror_w": _Show("power on the mirror", "", format_power),
    "absorbed_w": _Show("absorbed", "", format_power),
    "reflected_w": _Show("reflected", "", format_power),
    "peak_incident_w_m2": _Show("peak incident", "W/mm²", _g(1e-6)),
    "peak_absorbed_w_m2": _Show("peak absorbed", "W/mm²", _g(1e-6)),
    "thermal_gradient_k_m": _Show("temperature gradient under the peak", "K/mm", _g(1e-3)),
    "thermal_slope_rad": _Show("thermal slope (P-V)", "µrad", _g(1e6)),
    "thermal_slope_rms_rad": _Show("thermal slope rms", "µrad", _g(1e6)),
    "thermal_radius_m": _Show("thermal radius", "m", _g(), "infinite"),
}

_TITLES = {"mirror": "Grazing-incidence mirror · one thick surface",
           "stack": "Periodic multilayer stack",
           "drift": "Gas-filled drift",
           "demand": "Scanner demand", "undulator": "Undulator resonance",
           "beam": "Beam on a grazing mirror · footprint, density, thermal slope"}
#: Calculators whose single point is listed in full (the summary alone says too little).
_LISTED = {"beam"}
#: Calculators whose scan table shows only these columns, under these short headings
#: (the JSON keeps every field): their points hold more than a terminal's width.
_TABLE_IN = {"beam": {
    "distance_m": "distance\nm", "grazing_deg": "θ\n°", "size_tangential_m": "σt\nmm",
    "size_sagittal_m": "σs\nmm", "footprint_rms_m": "footprint\nmm",
    "accepted_fraction": "accepted\n%", "peak_absorbed_w_m2": "absorbed\nW/mm²",
    "thermal_slope_rad": "slope\nµrad"}}


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
    if not unit or not show.unit:
        return text
    return f"{text}{show.unit}" if show.unit == "°" else f"{text} {show.unit}"


def _columns(points: list[Mapping[str, Any]]) -> list[str]:
    """The keys shown as columns: an angle in degrees stands for its radians twin."""
    keys = list(points[0])
    return [k for k in keys if not (k.endswith("_rad") and k[:-4] + "_deg" in keys)]


def calc_renderable(document: Mapping[str, Any]) -> Group:
    """A calculator document as rich renderables for a terminal.

    First a header: the title and every option as the engineer gave it (the
    defaults that applied marked so). Then, for a scan, one line with what is
    the same at every point and a table of the rest; for one value, a line
    with the answer; demand and undulator list their result. Last the
    summary line and the method.

    Examples
    --------
    >>> import io
    >>> from rich.console import Console
    >>> from beamplan.report.calc import drift_document
    >>> console = Console(file=io.StringIO(), width=100, color_system=None)
    >>> console.print(calc_renderable(drift_document("H2", [10.0], 300.0, [2.0, 4.0], 13.5e-9)))
    >>> "T from" in console.file.getvalue()
    True
    """
    from rich import box
    from rich.console import Group
    from rich.table import Table
    from rich.text import Text

    name = str(document.get("calculator", ""))
    parts: list[Any] = [Text(_TITLES.get(name, name), style="bold")]
    header = Table(box=None, show_header=False, padding=(0, 1, 0, 2))
    header.add_column(style="bold")
    header.add_column(overflow="fold")
    header.add_column(style="dim")
    for option, text in document.get("given", {}).items():
        header.add_row(f"--{option}", str(text), "")
    for option, text in document.get("defaults", {}).items():
        header.add_row(f"--{option}", str(text), "default")
    parts += [header, Text("")]

    points: list[Mapping[str, Any]] = list(document.get("points", []))
    if len(points) > 1:
        short = _TABLE_IN.get(name)
        keys = _columns(points) if short is None else list(short)
        fixed = [k for k in keys if all(q[k] == points[0][k] for q in points)]
        shown = [k for k in fixed if _cell(k, points[0][k], unit=True)]  # "": nothing to say
        if shown:
            same = " · ".join(f"{_show(k, name).label} {_cell(k, points[0][k], unit=True)}"
                              for k in shown)
            parts.append(Text(f"at every point: {same}"))
        table = Table(box=box.SIMPLE_HEAD, padding=(0, 1))
        varying = [k for k in keys if k not in fixed]
        for key in varying:
            show = _show(key, name)
            heading = f"{show.label} {show.unit}".strip() if short is None else short[key]
            table.add_column(heading, justify="right")
        for q in points:
            table.add_row(*(_cell(k, q[k], unit=False, calc=name) for k in varying))
        parts.append(table)
    listed = points[0] if len(points) == 1 and name in _LISTED else None
    if "result" in document or listed is not None:
        result = Table(box=None, show_header=False, padding=(0, 1, 0, 2))
        result.add_column(style="bold")
        result.add_column(overflow="fold")
        rows = document["result"] if listed is None else {k: listed[k] for k in _columns(points)}
        for key, value in rows.items():
            show = _show(key, name)
            if value is not None or show.none:
                result.add_row(show.label, _cell(key, value, unit=True, calc=name))
        parts += [result, Text("")]
    if document.get("summary"):
        parts.append(Text(f"→ {document['summary']}", style="bold"))
    parts.append(Text(f"method: {document['method']}", style="dim"))
    return Group(*parts)


def calc_csv(document: Mapping[str, Any]) -> str:
    """The points of a calculator document (or its result, as one row) as CSV text.

    A header of the field names, then one row per point; numbers as their shortest
    exact text (the JSON's own values), booleans as ``true``/``false``, null (and a
    value that is not finite) as empty.

    Examples
    --------
    >>> print(calc_csv({"points": [{"length_m": 2.0, "transmission": 0.5, "x": None}]}), end="")
    length_m,transmission,x
    2.0,0.5,
    """
    import csv
    import io

    rows: list[Mapping[str, Any]] = list(document.get("points") or [document.get("result", {})])
    keys = list(rows[0]) if rows else []
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(keys)
    for row in rows:
        writer.writerow([_csv_cell(row.get(k)) for k in keys])
    return buffer.getvalue()


def _csv_cell(value: Any) -> Any:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return ""  # JSON's null
    if isinstance(value, bool):
        return "true" if value else "false"
    return repr(value) if isinstance(value, float) else value

"""Results of the stand-alone calculators (``beamplan calc ...``): JSON documents and tables.

Each ``*_document`` function calls the pure physics functions and returns a
JSON-ready dict with a ``"format": "beamplan-calc-<name>/1"`` key, SI values
with the unit in the key name, and a fixed key order (docs/calculators.md).
Floats are the physics functions' own values, unrounded; a value that is not
finite (an infinite attenuation length, a bandwidth that could not be found)
is ``None``. :func:`calc_renderable` turns any such document into rich
renderables for a terminal. numpy, periodictable and rich load only when needed.
"""

from __future__ import annotations

import itertools
import json
import math
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import asdict, dataclass
from typing import TYPE_CHECKING, Any, NamedTuple

from beamplan import __version__
from beamplan.units import format_power

if TYPE_CHECKING:
    from rich.console import Group

    from beamplan.physics.demand import ScannerTool

__all__ = [
    "StochasticFloor",
    "calc_json",
    "calc_renderable",
    "demand_document",
    "gas_document",
    "multilayer_document",
    "reflect_document",
    "undulator_document",
]


def _f(value: float | None) -> float | None:
    """The float itself, or None when it is None or not finite (JSON has no inf/NaN)."""
    return None if value is None or not math.isfinite(value) else float(value)


def _head(name: str) -> dict[str, Any]:
    return {"format": f"beamplan-calc-{name}/1", "beamplan_version": __version__}


def reflect_document(coating: str, grazing_rad: Sequence[float], wavelength_m: Sequence[float],
                     *, density_g_cm3: float | None = None, roughness_m: float = 0.0,
                     polarisation: float = 0.0,
                     delta_beta: tuple[float, float] | None = None) -> dict[str, Any]:
    """Single-surface mirror reflectivity, one row per (wavelength, grazing angle).

    Examples
    --------
    >>> doc = reflect_document("Ru", [math.radians(10)], [13.5e-9], polarisation=1.0)
    >>> doc["format"], round(doc["rows"][0]["reflectivity"], 3)
    ('beamplan-calc-reflect/1', 0.894)
    """
    from beamplan.physics.optics import mirror_reflectivity

    override = None if delta_beta is None else complex(delta_beta[0], delta_beta[1])
    rows, method = [], ""
    for lam, theta in itertools.product(wavelength_m, grazing_rad):
        m = mirror_reflectivity(coating, theta, lam, density_g_cm3=density_g_cm3,
                                roughness_m=roughness_m, polarisation=polarisation,
                                delta_beta=override)
        method = m.method
        rows.append({"grazing_rad": theta, "wavelength_m": lam, "reflectivity": m.reflectivity,
                     "reflectivity_s": m.reflectivity_s, "reflectivity_p": m.reflectivity_p,
                     "delta": m.delta, "beta": m.beta,
                     "critical_angle_rad": m.critical_angle_rad})
    inputs = {"coating": coating, "density_g_cm3": density_g_cm3, "roughness_m": roughness_m,
              "polarisation": polarisation,
              "delta_beta": None if delta_beta is None else [delta_beta[0], delta_beta[1]]}
    return {**_head("reflect"), "inputs": inputs, "rows": rows, "method": method}


def multilayer_document(pair: tuple[str, str], period_m: float, gamma: float, bilayers: int,
                        incidence_rad: Sequence[float], wavelength_m: Sequence[float], *,
                        capping: tuple[str, float] | None = None, substrate: str = "SiO2",
                        roughness_m: float = 0.0, polarisation: float = 0.0,
                        densities_g_cm3: Mapping[str, float] | None = None,
                        peak: bool = False) -> dict[str, Any]:
    """Periodic multilayer reflectivity, one row per (incidence, wavelength); optional peak.

    With ``peak``, :func:`~beamplan.physics.multilayer.multilayer_peak` scans the
    wavelength at the (single) incidence; the Bragg estimate that centres the scan
    takes its mean index at the middle of the ``wavelength_m`` values.

    Examples
    --------
    >>> doc = multilayer_document(("Mo", "Si"), 6.9e-9, 0.4, 50, [0.0], [13.4e-9])
    >>> round(doc["rows"][0]["reflectivity"], 3), doc["peak"]
    (0.726, None)
    """
    from beamplan.physics.multilayer import multilayer_peak, multilayer_reflectivity

    common: dict[str, Any] = {"capping": capping, "substrate": substrate,
                              "roughness_m": roughness_m, "polarisation": polarisation,
                              "densities_g_cm3": dict(densities_g_cm3 or {})}
    rows, method = [], ""
    for theta, lam in itertools.product(incidence_rad, wavelength_m):
        m = multilayer_reflectivity(pair, period_m, gamma, bilayers, theta, lam, **common)
        method = m.method
        rows.append({"incidence_rad": theta, "wavelength_m": lam, "reflectivity": m.reflectivity,
                     "reflectivity_s": m.reflectivity_s, "reflectivity_p": m.reflectivity_p})
    found = None
    if peak:
        if len(incidence_rad) != 1:
            raise ValueError("the peak search needs a single angle of incidence")
        reference = 0.5 * (min(wavelength_m) + max(wavelength_m))
        p = multilayer_peak(pair, period_m, gamma, bilayers, incidence_rad[0], reference,
                            scan="wavelength", **common)
        method = method or p.method
        found = {"scan": p.scan, "incidence_rad": p.peak_incidence_rad,
                 "reference_wavelength_m": reference, "peak_reflectivity": p.peak_reflectivity,
                 "peak_wavelength_m": p.peak_wavelength_m, "fwhm_m": _f(p.fwhm_m)}
    inputs = {"absorber": pair[0], "spacer": pair[1], "period_m": period_m, "gamma": gamma,
              "bilayers": bilayers,
              "capping": None if capping is None else {"formula": capping[0],
                                                       "thickness_m": capping[1]},
              "substrate": substrate, "roughness_m": roughness_m, "polarisation": polarisation,
              "densities_g_cm3": dict(densities_g_cm3 or {})}
    return {**_head("multilayer"), "inputs": inputs, "rows": rows, "peak": found,
            "method": method}


def gas_document(gas: str, pressure_pa: Sequence[float], temperature_k: float,
                 length_m: Sequence[float], wavelength_m: float) -> dict[str, Any]:
    """Gas-drift transmission, one row per (pressure, length).

    Examples
    --------
    >>> doc = gas_document("H2", [10.0], 300.0, [2.0], 13.5e-9)
    >>> round(doc["rows"][0]["transmission"], 3)
    0.976
    """
    from beamplan.physics.gas import gas_transmission

    rows, method = [], ""
    for p, length in itertools.product(pressure_pa, length_m):
        t = gas_transmission(gas, p, temperature_k, length, wavelength_m)
        method = t.method
        rows.append({"pressure_pa": p, "length_m": length, "transmission": t.transmission,
                     "number_density_m3": t.number_density_m3,
                     "cross_section_m2": t.cross_section_m2,
                     "attenuation_length_m": _f(t.attenuation_length_m)})
    inputs = {"gas": gas, "temperature_k": temperature_k, "wavelength_m": wavelength_m}
    return {**_head("gas"), "inputs": inputs, "rows": rows, "method": method}


@dataclass(frozen=True)
class StochasticFloor:
    """The resist and budget of the shot-noise dose floor (SI: m², 1/m, m, fraction)."""

    critical_area_m2: float
    absorption_per_m: float
    thickness_m: float
    noise_budget: float


_DEMAND_METHOD = ("scanner throughput model (common practice, no source): D = P_wafer/(L v), "
                  "v <= stage maximum, P_IF = P_wafer/((1 − m) T_IF→wafer)")
_FLOOR_METHOD = ("; shot-noise floor D_min = E_photon/(A f σ²), f = 1 − exp(−α t) "
                 "(Poisson photon counting)")


def demand_document(tool: ScannerTool, recipe_dose_j_m2: float, *,
                    wafers_per_hour: float | None = None, if_power_w: float | None = None,
                    wavelength_m: float = 13.5e-9,
                    stochastic: StochasticFloor | None = None) -> dict[str, Any]:
    """IF power for a throughput (``wafers_per_hour``) or throughput at a power (``if_power_w``).

    Raises :class:`~beamplan.physics.demand.DemandError` when the target is beyond the stage.

    Examples
    --------
    >>> from beamplan.physics.demand import ScannerTool
    >>> doc = demand_document(ScannerTool(), 300.0, wafers_per_hour=150.0)
    >>> round(doc["result"]["if_power_w"], 1), doc["result"]["limit"]
    (200.8, 'power')
    """
    from beamplan.physics import demand as dm
    from beamplan.physics.photons import absorbed_fraction, stochastic_dose_floor_j_m2

    if (wafers_per_hour is None) == (if_power_w is None):
        raise ValueError("give exactly one of wafers_per_hour and if_power_w")
    floor = fraction = None
    if stochastic is not None:
        fraction = absorbed_fraction(stochastic.absorption_per_m, stochastic.thickness_m)
        floor = stochastic_dose_floor_j_m2(wavelength_m, stochastic.critical_area_m2, fraction,
                                           stochastic.noise_budget)
    dose, source = dm.effective_dose(recipe_dose_j_m2, 0.0 if floor is None else floor)
    result: dict[str, Any] = {"dose_j_m2": dose, "dose_source": source,
                              "stochastic_floor_j_m2": floor, "absorbed_fraction": fraction,
                              "transmission_if_to_wafer": tool.transmission_if_to_wafer()}
    stage_power = dm.stage_limit_if_power_w(tool, dose)
    if wafers_per_hour is not None:
        need = dm.required_if_power(tool, dose, wafers_per_hour)
        result.update(if_power_w=need.if_power_w, wafer_power_w=need.wafer_power_w,
                      scan_speed_m_s=need.scan_speed_m_s, time_per_wafer_s=need.time_per_wafer_s,
                      scan_time_per_field_s=need.scan_time_per_field_s,
                      stage_limited_wph=need.stage_limited_wph,
                      stage_limit_if_power_w=stage_power, limit=need.limit)
        why = ("the source power sets the scan speed" if need.limit == "power" else
               "the target sits on the stage limit")
        summary = (f"{format_power(need.if_power_w)} at IF for {wafers_per_hour:g} wph; {why}")
        mode, target = "need", {"wafers_per_hour": wafers_per_hour}
    else:
        assert if_power_w is not None
        got = dm.throughput_at_power(tool, dose, if_power_w)
        result.update(wafers_per_hour=got.wafers_per_hour, scan_speed_m_s=got.scan_speed_m_s,
                      time_per_wafer_s=_f(got.time_per_wafer_s), wafer_power_w=got.wafer_power_w,
                      stage_limited_wph=dm.stage_limited_wph(tool),
                      stage_limit_if_power_w=got.stage_limit_if_power_w, limit=got.limit)
        why = (f"the stage limits; more than {format_power(stage_power)} at IF buys nothing"
               if got.limit == "stage" else
               f"the source power limits, up to {format_power(stage_power)} at IF")
        summary = f"{got.wafers_per_hour:.4g} wph at {format_power(if_power_w)}; {why}"
        mode, target = "throughput", {"if_power_w": if_power_w}
    summary += f"; dose {dose / 10:.4g} mJ/cm² set by the {source}"
    inputs = {"recipe_dose_j_m2": recipe_dose_j_m2, **target, "wavelength_m": wavelength_m,
              "tool": asdict(tool),
              "stochastic": None if stochastic is None else asdict(stochastic)}
    return {**_head("demand"), "mode": mode, "inputs": inputs, "result": result,
            "summary": summary, "method": _DEMAND_METHOD + (_FLOOR_METHOD if stochastic else "")}


def undulator_document(electron_energy_ev: float, period_m: float, *, k: float | None = None,
                       peak_field_t: float | None = None, target_m: float | None = None,
                       check_m: float | None = None, harmonic: int = 1, tolerance: float = 0.01,
                       tunable: bool = False) -> dict[str, Any]:
    """Resonance of a planar undulator in one of three modes.

    ``mode`` is ``"wavelength"`` (K or field given: the resonant wavelength),
    ``"k"`` (``target_m`` given: the K and field that reach it; raises
    :class:`~beamplan.physics.undulator.ResonanceError` when none does) or
    ``"check"`` (``check_m`` and K or field: is it reachable?).

    Examples
    --------
    >>> doc = undulator_document(1e9, 0.028, target_m=13.5e-9)
    >>> doc["mode"], round(doc["result"]["k"], 4)
    ('k', 2.3207)
    """
    from beamplan.physics import undulator as un
    from beamplan.physics.photons import photon_energy_ev

    gamma = un.lorentz_gamma(electron_energy_ev)
    shortest = un.resonant_wavelength_m(electron_energy_ev, period_m, 0.0, harmonic)
    result: dict[str, Any]
    if target_m is not None:
        mode, k = "k", un.k_for_wavelength(target_m, electron_energy_ev, period_m, harmonic)
        peak_field_t = un.peak_field_for_k_t(k, period_m)
    elif k is not None or peak_field_t is not None:
        mode = "check" if check_m is not None else "wavelength"
        if k is None:
            assert peak_field_t is not None
            k = un.undulator_k(peak_field_t, period_m)
        else:
            peak_field_t = un.peak_field_for_k_t(k, period_m)
    else:
        raise ValueError("give k or peak_field_t, or target_m")
    resonant = un.resonant_wavelength_m(electron_energy_ev, period_m, k, harmonic)
    if mode == "check":
        assert check_m is not None
        c = un.resonance_check(check_m, electron_energy_ev, period_m, k=k, tolerance=tolerance,
                               harmonic=harmonic, tunable=tunable)
        need_t = None if c.k_required is None else un.peak_field_for_k_t(c.k_required, period_m)
        result = {"reachable": c.reachable, "lorentz_gamma": gamma, "k": c.k,
                  "peak_field_t": peak_field_t, "resonant_wavelength_m": c.resonant_wavelength_m,
                  "relative_error": c.relative_error, "k_required": c.k_required,
                  "peak_field_required_t": need_t, "shortest_wavelength_m": c.shortest_wavelength_m}
        summary = c.message
    else:
        result = {"lorentz_gamma": gamma, "k": k, "peak_field_t": peak_field_t,
                  "resonant_wavelength_m": resonant, "photon_energy_ev": photon_energy_ev(resonant),
                  "shortest_wavelength_m": shortest}
        summary = (f"K = {k:.6g} (peak field {peak_field_t:.4g} T) radiates "
                   f"{resonant * 1e9:.6g} nm at harmonic {harmonic}")
    inputs = {"electron_energy_ev": electron_energy_ev, "period_m": period_m,
              "harmonic": harmonic, "target_wavelength_m": target_m,
              "declared_wavelength_m": check_m,
              "tolerance": tolerance if mode == "check" else None,
              "tunable": tunable if mode == "check" else None}
    return {**_head("undulator"), "mode": mode, "inputs": inputs, "result": result,
            "summary": summary,
            "method": "planar-undulator resonance λ_n = λ_u/(2nγ²)(1 + K²/2), "
                      "K = e B λ_u/(2π m_e c) (X-ray Data Booklet, section 2.1)"}


def calc_json(document: Mapping[str, Any]) -> str:
    """The JSON text of a calculator document (indented, newline-terminated, strict JSON).

    Examples
    --------
    >>> calc_json({"format": "beamplan-calc-x/1", "rows": []}).splitlines()[1]
    '  "format": "beamplan-calc-x/1",'
    """
    return json.dumps(document, indent=2, ensure_ascii=False, allow_nan=False) + "\n"


# ---- terminal rendering: one display rule per JSON key --------------------------------------

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

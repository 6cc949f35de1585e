"""Results of the stand-alone calculators (``beamplan calc ...``): JSON documents.

Each ``*_document`` function calls the pure physics functions and returns a
JSON-ready dict in the ``beamplan-calc/2`` shape (docs/calculators.md): the
``calculator``, the options ``given`` as typed and the ``defaults`` that
applied, the ``inputs`` in SI with the unit in the key name, then ``points``
(one per scanned value) or a ``result``, a one-line ``summary`` and the
``method``. Floats are the physics functions' own values, unrounded; a value
that is not finite (an infinite attenuation length, a bandwidth that could not
be found) is ``None``. :func:`beamplan.report.calc_view.calc_renderable` turns
any such document into rich renderables for a terminal. numpy, periodictable
and rich load only when needed.
"""

from __future__ import annotations

import itertools
import json
import math
from collections.abc import Mapping, Sequence
from dataclasses import asdict, dataclass
from typing import TYPE_CHECKING, Any

from beamplan import __version__
from beamplan.units import format_power

if TYPE_CHECKING:

    from beamplan.physics.demand import ScannerTool

__all__ = [
    "FORMAT",
    "Given",
    "StochasticFloor",
    "calc_json",
    "demand_document",
    "drift_document",
    "mirror_document",
    "stack_document",
    "undulator_document",
]

#: The version of the calculators' JSON documents.
FORMAT = "beamplan-calc/2"


@dataclass(frozen=True)
class Given:
    """The options as the engineer typed them, and the defaults that applied (as text)."""

    typed: Mapping[str, str]
    defaults: Mapping[str, str]


_NONE = Given({}, {})


def _f(value: float | None) -> float | None:
    """The float itself, or None when it is None or not finite (JSON has no inf/NaN)."""
    return None if value is None or not math.isfinite(value) else float(value)


def _head(name: str, given: Given | None, mode: str | None = None) -> dict[str, Any]:
    given = given or _NONE
    head: dict[str, Any] = {"format": FORMAT, "calculator": name,
                            "beamplan_version": __version__}
    if mode is not None:
        head["mode"] = mode
    return {**head, "given": dict(given.typed), "defaults": dict(given.defaults)}


def _light(polarisation: str) -> str:
    """``s`` → ``s-polarised``; a mix ``s=0.7`` and ``unpolarised`` as they are."""
    return f"{polarisation}-polarised" if polarisation in ("s", "p") else polarisation


def _deg(rad: float) -> float:
    return math.degrees(rad)


def mirror_document(coating: str, grazing_rad: Sequence[float], wavelength_m: Sequence[float],
                    *, density_g_cm3: float | None = None, roughness_m: float = 0.0,
                    polarisation: str = "unpolarised", s_fraction: float = 0.5,
                    delta_beta: tuple[float, float] | None = None,
                    given: Given | None = None) -> dict[str, Any]:
    """Single-surface grazing mirror, one point per (wavelength, grazing angle).

    ``s_fraction`` is the share of the power that is s-polarised (``polarisation``
    names it: ``"s"``, ``"p"``, ``"unpolarised"`` or ``"s=0.7"``).

    Examples
    --------
    >>> doc = mirror_document("Ru", [math.radians(10)], [13.5e-9], polarisation="s",
    ...                       s_fraction=1.0)
    >>> doc["format"], round(doc["points"][0]["reflectivity"], 3)
    ('beamplan-calc/2', 0.894)
    """
    from beamplan.physics.optics import mirror_reflectivity

    override = None if delta_beta is None else complex(delta_beta[0], delta_beta[1])
    points: list[dict[str, Any]] = []
    method = ""
    for lam, theta in itertools.product(wavelength_m, grazing_rad):
        m = mirror_reflectivity(coating, theta, lam, density_g_cm3=density_g_cm3,
                                roughness_m=roughness_m, polarisation=2.0 * s_fraction - 1.0,
                                delta_beta=override)
        method = m.method
        points.append({"grazing_rad": theta, "grazing_deg": _deg(theta), "wavelength_m": lam,
                       "reflectivity": m.reflectivity, "reflectivity_s": m.reflectivity_s,
                       "reflectivity_p": m.reflectivity_p, "delta": m.delta, "beta": m.beta,
                       "critical_grazing_rad": m.critical_angle_rad,
                       "critical_grazing_deg": _deg(m.critical_angle_rad)})
    if len(points) == 1:
        p = points[0]
        summary = (f"R = {p['reflectivity']:.5f} ({_light(polarisation)}) at "
                   f"{p['grazing_deg']:.4g}° grazing, {p['wavelength_m'] * 1e9:.4g} nm; "
                   f"R s-pol {p['reflectivity_s']:.5f}, R p-pol {p['reflectivity_p']:.5f}; "
                   f"δ {p['delta']:.4g}, β {p['beta']:.4g}; "
                   f"critical grazing {p['critical_grazing_deg']:.4g}°")
    else:
        top = max(points, key=lambda q: float(q["reflectivity"]))
        summary = (f"{len(points)} points; highest R {top['reflectivity']:.5f} at "
                   f"{top['grazing_deg']:.4g}° grazing, {top['wavelength_m'] * 1e9:.4g} nm")
    inputs = {"coating": coating, "density_g_cm3": density_g_cm3, "roughness_m": roughness_m,
              "polarisation": polarisation, "s_fraction": s_fraction,
              "delta": None if delta_beta is None else delta_beta[0],
              "beta": None if delta_beta is None else delta_beta[1]}
    return {**_head("mirror", given), "inputs": inputs, "points": points,
            "summary": summary, "method": method}


def stack_document(pair: tuple[str, str], period_m: float, absorber_fraction: float,
                   periods: int, incidence_rad: Sequence[float], wavelength_m: Sequence[float],
                   *, cap: tuple[str, float] | None = None, substrate: str = "SiO2",
                   roughness_m: float = 0.0, polarisation: str = "unpolarised",
                   s_fraction: float = 0.5, densities_g_cm3: Mapping[str, float] | None = None,
                   peak: bool = False, given: Given | None = None) -> dict[str, Any]:
    """Periodic multilayer stack, one point per (incidence, wavelength); optional peak.

    With ``peak``, :func:`~beamplan.physics.multilayer.multilayer_peak` scans the
    wavelength at the (single) incidence; the Bragg estimate that centres the scan
    takes its mean index at the middle of the ``wavelength_m`` values.

    Examples
    --------
    >>> doc = stack_document(("Mo", "Si"), 6.9e-9, 0.4, 50, [0.0], [13.4e-9])
    >>> round(doc["points"][0]["reflectivity"], 3), doc["peak"]
    (0.726, None)
    """
    from beamplan.physics.multilayer import multilayer_peak, multilayer_reflectivity

    common: dict[str, Any] = {"capping": cap, "substrate": substrate,
                              "roughness_m": roughness_m,
                              "polarisation": 2.0 * s_fraction - 1.0,
                              "densities_g_cm3": dict(densities_g_cm3 or {})}
    points: list[dict[str, Any]] = []
    method = ""
    for theta, lam in itertools.product(incidence_rad, wavelength_m):
        m = multilayer_reflectivity(pair, period_m, absorber_fraction, periods, theta, lam,
                                    **common)
        method = m.method
        points.append({"incidence_rad": theta, "incidence_deg": _deg(theta), "wavelength_m": lam,
                       "reflectivity": m.reflectivity, "reflectivity_s": m.reflectivity_s,
                       "reflectivity_p": m.reflectivity_p})
    found: dict[str, Any] | None = None
    if peak:
        if len(incidence_rad) != 1:
            raise ValueError("the peak search needs a single angle of incidence")
        reference = 0.5 * (min(wavelength_m) + max(wavelength_m))
        p = multilayer_peak(pair, period_m, absorber_fraction, periods, incidence_rad[0],
                            reference, scan="wavelength", **common)
        method = method or p.method
        found = {"incidence_rad": p.peak_incidence_rad,
                 "incidence_deg": _deg(p.peak_incidence_rad),
                 "wavelength_m": p.peak_wavelength_m, "reflectivity": p.peak_reflectivity,
                 "bandwidth_fwhm_m": _f(p.fwhm_m), "index_wavelength_m": reference}
    if len(points) == 1:
        q = points[0]
        summary = (f"R = {q['reflectivity']:.5f} ({_light(polarisation)}) at "
                   f"{q['incidence_deg']:.4g}° from the normal, {q['wavelength_m'] * 1e9:.4g} nm; "
                   f"R s-pol {q['reflectivity_s']:.5f}, R p-pol {q['reflectivity_p']:.5f}")
    else:
        summary = f"{len(points)} points; highest R {max(q['reflectivity'] for q in points):.5f}"
    if found is not None:
        width = found["bandwidth_fwhm_m"]
        summary += (f"; peak R = {found['reflectivity']:.5f} at "
                    f"{found['wavelength_m'] * 1e9:.4g} nm, FWHM "
                    + ("outside the scan" if width is None else f"{width * 1e9:.3g} nm"))
    inputs = {"absorber": pair[0], "spacer": pair[1], "period_m": period_m,
              "absorber_fraction": absorber_fraction, "periods": periods,
              "cap": None if cap is None else cap[0],
              "cap_thickness_m": None if cap is None else cap[1],
              "substrate": substrate, "roughness_m": roughness_m, "polarisation": polarisation,
              "s_fraction": s_fraction, "densities_g_cm3": dict(densities_g_cm3 or {})}
    return {**_head("stack", given), "inputs": inputs, "points": points, "peak": found,
            "summary": summary, "method": method}


def drift_document(gas: str, pressure_pa: Sequence[float], temperature_k: float,
                   length_m: Sequence[float], wavelength_m: float,
                   *, given: Given | None = None) -> dict[str, Any]:
    """Gas transmission of a drift, one point per (pressure, length).

    Examples
    --------
    >>> doc = drift_document("H2", [10.0], 300.0, [2.0], 13.5e-9)
    >>> round(doc["points"][0]["transmission"], 3)
    0.976
    """
    from beamplan.physics.gas import gas_transmission

    points: list[dict[str, Any]] = []
    method = ""
    for p, length in itertools.product(pressure_pa, length_m):
        t = gas_transmission(gas, p, temperature_k, length, wavelength_m)
        method = t.method
        points.append({"pressure_pa": p, "length_m": length, "transmission": t.transmission,
                       "number_density_m3": t.number_density_m3,
                       "cross_section_m2": t.cross_section_m2,
                       "attenuation_length_m": _f(t.attenuation_length_m)})
    if len(points) == 1:
        q = points[0]
        e = q["attenuation_length_m"]
        summary = (f"T = {q['transmission']:.5f} through {q['length_m']:.4g} m of {gas} at "
                   f"{q['pressure_pa']:.4g} Pa, {temperature_k:.4g} K; 1/e length "
                   + ("infinite" if e is None else f"{e:.4g} m"))
    else:
        low = min(q["transmission"] for q in points)
        high = max(q["transmission"] for q in points)
        summary = f"{len(points)} points; T from {low:.5f} to {high:.5f}"
    inputs = {"gas": gas, "temperature_k": temperature_k, "wavelength_m": wavelength_m}
    return {**_head("drift", given), "inputs": inputs, "points": points, "summary": summary,
            "method": method}


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
                    stochastic: StochasticFloor | None = None,
                    given: Given | None = None) -> dict[str, Any]:
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
    from beamplan.physics.shot_noise import absorbed_fraction, stochastic_dose_floor_j_m2

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
    return {**_head("demand", given, mode), "inputs": inputs, "result": result,
            "summary": summary, "method": _DEMAND_METHOD + (_FLOOR_METHOD if stochastic else "")}


def undulator_document(electron_energy_ev: float, period_m: float, *, k: float | None = None,
                       peak_field_t: float | None = None, target_m: float | None = None,
                       check_m: float | None = None, harmonic: int = 1, tolerance: float = 0.01,
                       tunable: bool = False, given: Given | None = None) -> dict[str, Any]:
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
    from beamplan.physics.resonance import resonance_check

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
        c = resonance_check(check_m, electron_energy_ev, period_m, k=k, tolerance=tolerance,
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
    return {**_head("undulator", given, mode), "inputs": inputs, "result": result,
            "summary": summary,
            "method": "planar-undulator resonance λ_n = λ_u/(2nγ²)(1 + K²/2), "
                      "K = e B λ_u/(2π m_e c) (X-ray Data Booklet, section 2.1)"}


def calc_json(document: Mapping[str, Any]) -> str:
    """The JSON text of a calculator document (indented, newline-terminated, strict JSON).

    Examples
    --------
    >>> calc_json({"format": "beamplan-calc/2", "points": []}).splitlines()[1]
    '  "format": "beamplan-calc/2",'
    """
    return json.dumps(_finite(document), indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def _finite(value: Any) -> Any:
    """``value`` with every float that is not finite replaced by None."""
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, Mapping):
        return {k: _finite(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_finite(v) for v in value]
    return value

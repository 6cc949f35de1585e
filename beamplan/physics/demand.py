"""Scanner throughput model: EUV power needed at IF for a dose and a wafer rate.

Method (common practice, no single source). A slit of length ``L`` (the field width,
across the scan) and height ``H`` (along the scan) sweeps each field at speed ``v``.
A point on the wafer sees the slit for ``H / v`` seconds at an irradiance
``P_wafer / (L H)``, so it receives the dose::

    D = P_wafer / (L H) × H / v = P_wafer / (L v)    =>    v = P_wafer / (D L)

The slit height cancels from the dose; it only adds overscan to the scan length. The
scan speed is capped by the stage, ``v = min(v_stage, P_wafer / (D L))``, and::

    time per wafer = wafer overhead + N_fields × (field overhead + scan length / v)
    scan length    = field length + slit height
    P_wafer        = P_IF × (1 − m) × T_IF→wafer
    T_IF→wafer     = R_mirror^n × R_mask × T_pellicle² × other losses

Dose-control margin ``m``: the dose controller holds back a fraction ``m`` of the
power delivered at IF (it regulates by attenuating), so only ``(1 − m) P_IF`` exposes.
The need at IF is therefore scaled by ``1 / (1 − m)``, not by ``(1 + m)``; this
keeps :func:`required_if_power` and :func:`throughput_at_power` exact inverses.

The power-independent part (time per wafer, the stage limit, the useful ceiling)
is in :mod:`beamplan.physics.stage`, and re-exported here.

SI units throughout: m, s, W, J/m² (1 mJ/cm² = 10 J/m²).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

from beamplan.physics.scanner_tool import ScannerTool
from beamplan.physics.stage import (
    SECONDS_PER_HOUR,
    if_to_exposure,
    require_dose,
    stage_limit_if_power_w,
    stage_limited_wph,
    time_per_wafer_s,
    useful_ceiling_w,
)

__all__ = [
    "DemandError",
    "DemandResult",
    "DoseSource",
    "Limit",
    "ScannerTool",
    "ThroughputResult",
    "effective_dose",
    "required_if_power",
    "stage_limit_if_power_w",
    "stage_limited_wph",
    "throughput_at_power",
    "time_per_wafer_s",
    "useful_ceiling_w",
]

Limit = Literal["power", "stage"]
DoseSource = Literal["recipe", "stochastic floor"]

_AT_CEILING_RTOL = 1e-6  # a power within this of the useful ceiling counts as at it
_STAGE_SLACK = 1e-9  # relative slack when a target sits exactly on the stage limit


class DemandError(ValueError):
    """A throughput target that the stage cannot reach at any source power.

    Attributes
    ----------
    requested_wph : float
        The target throughput in wafers per hour.
    stage_limited_wph : float
        The most the tool reaches, with the stage at its maximum scan speed.
    """

    def __init__(self, message: str, *, requested_wph: float, stage_limited_wph: float) -> None:
        super().__init__(message)
        self.requested_wph = requested_wph
        self.stage_limited_wph = stage_limited_wph


@dataclass(frozen=True)
class DemandResult:
    """Power needed at IF for a dose and a throughput target.

    Attributes
    ----------
    if_power_w : float
        Power needed at IF, dose-control margin included.
    wafer_power_w : float
        Power that reaches the wafer during the scan.
    scan_speed_m_s : float
        Scan speed that meets the target.
    time_per_wafer_s : float
        Time budget per wafer, 3600 / wph.
    scan_time_per_field_s : float
        Scan time per field left after the overheads.
    stage_limited_wph : float
        Most the tool reaches at any power (stage at full speed).
    limit : {"power", "stage"}
        ``"power"`` when the need is set by the source (stage below its maximum),
        ``"stage"`` when the target sits on the stage limit.
    """

    if_power_w: float
    wafer_power_w: float
    scan_speed_m_s: float
    time_per_wafer_s: float
    scan_time_per_field_s: float
    stage_limited_wph: float
    limit: Limit


@dataclass(frozen=True)
class ThroughputResult:
    """Throughput of a tool at a given IF power.

    Attributes
    ----------
    wafers_per_hour : float
        Throughput in wafers per hour (0 at zero power).
    scan_speed_m_s : float
        Scan speed, min(stage maximum, power-limited speed).
    time_per_wafer_s : float
        Time per wafer (``inf`` at zero power).
    wafer_power_w : float
        Exposure power reaching the wafer.
    stage_limit_if_power_w : float
        IF power above which the stage limits and more power buys nothing.
    limit : {"power", "stage"}
        Which of the two sets the scan speed.
    """

    wafers_per_hour: float
    scan_speed_m_s: float
    time_per_wafer_s: float
    wafer_power_w: float
    stage_limit_if_power_w: float
    limit: Limit


def required_if_power(tool: ScannerTool, dose_j_m2: float, wafers_per_hour: float) -> DemandResult:
    """Power needed at IF to expose ``wafers_per_hour`` at ``dose_j_m2``.

    Method (common practice, no source): the time budget 3600 / wph, less the
    overheads, leaves a scan time per field ``t = (3600/wph − T_wafer)/N − T_field``;
    then ``v = scan length / t``, ``P_wafer = D L v`` (from ``D = P_wafer / (L v)``)
    and ``P_IF = P_wafer / ((1 − m) T_IF→wafer)``.

    Parameters
    ----------
    tool : ScannerTool
        The scanner.
    dose_j_m2 : float
        Dose at the wafer in J/m², > 0 (see :func:`effective_dose`).
    wafers_per_hour : float
        Throughput target, > 0.

    Returns
    -------
    DemandResult
        The need at IF, the scan speed, the time budget and the limit.

    Raises
    ------
    DemandError
        If the target exceeds the stage-limited throughput (no power reaches it).
    ValueError
        If the dose or the target is not positive.

    Examples
    --------
    >>> r = required_if_power(ScannerTool(), 300.0, 150.0)
    >>> round(r.if_power_w, 1), round(r.scan_speed_m_s, 4), r.limit
    (200.8, 0.3294, 'power')
    >>> try:
    ...     required_if_power(ScannerTool(), 300.0, 250.0)
    ... except DemandError as err:
    ...     print(round(err.stage_limited_wph, 2))
    200.0
    """
    require_dose(dose_j_m2)
    if not (wafers_per_hour > 0.0 and math.isfinite(wafers_per_hour)):
        raise ValueError(f"wafers_per_hour must be positive and finite, got {wafers_per_hour!r}")
    max_wph = stage_limited_wph(tool)
    if wafers_per_hour > max_wph * (1.0 + _STAGE_SLACK):
        raise DemandError(
            f"{wafers_per_hour:g} wph is beyond the stage limit: at "
            f"{tool.stage_max_speed_m_s:g} m/s the tool reaches at most {max_wph:.2f} wph "
            "at any source power",
            requested_wph=wafers_per_hour,
            stage_limited_wph=max_wph,
        )
    budget_s = SECONDS_PER_HOUR / wafers_per_hour
    scan_time_s = (budget_s - tool.wafer_overhead_s) / tool.fields_per_wafer - tool.field_overhead_s
    speed_m_s = tool.scan_length_m / scan_time_s
    limit: Limit = "power"
    if speed_m_s >= tool.stage_max_speed_m_s * (1.0 - _AT_CEILING_RTOL):
        speed_m_s = tool.stage_max_speed_m_s
        limit = "stage"
    wafer_power_w = dose_j_m2 * tool.slit_length_m * speed_m_s
    return DemandResult(
        if_power_w=wafer_power_w / if_to_exposure(tool),
        wafer_power_w=wafer_power_w,
        scan_speed_m_s=speed_m_s,
        time_per_wafer_s=budget_s,
        scan_time_per_field_s=scan_time_s,
        stage_limited_wph=max_wph,
        limit=limit,
    )


def throughput_at_power(tool: ScannerTool, dose_j_m2: float, if_power_w: float) -> ThroughputResult:
    """Wafers per hour a tool exposes at ``dose_j_m2`` with ``if_power_w`` at IF.

    Method (common practice, no source): ``P_wafer = (1 − m) T P_IF``, scan speed
    ``v = min(v_stage, P_wafer / (D L))``, then 3600 / time per wafer. The inverse
    of :func:`required_if_power` wherever the stage does not limit.

    Parameters
    ----------
    tool : ScannerTool
        The scanner.
    dose_j_m2 : float
        Dose at the wafer in J/m², > 0.
    if_power_w : float
        Power delivered at IF in W, >= 0.

    Returns
    -------
    ThroughputResult
        Throughput, scan speed and which limit ("stage" or "power") sets it.

    Examples
    --------
    >>> r = throughput_at_power(ScannerTool(), 300.0, 200.0)
    >>> round(r.wafers_per_hour, 2), r.limit
    (149.75, 'power')
    >>> throughput_at_power(ScannerTool(), 300.0, 1000.0).limit
    'stage'
    """
    require_dose(dose_j_m2)
    if not (if_power_w >= 0.0 and math.isfinite(if_power_w)):
        raise ValueError(f"if_power_w must be non-negative and finite, got {if_power_w!r}")
    wafer_power_w = if_power_w * if_to_exposure(tool)
    power_speed_m_s = wafer_power_w / (dose_j_m2 * tool.slit_length_m)
    stage_power_w = stage_limit_if_power_w(tool, dose_j_m2)
    limit: Limit = "power"
    speed_m_s = power_speed_m_s
    if power_speed_m_s >= tool.stage_max_speed_m_s * (1.0 - _AT_CEILING_RTOL):
        # at the useful ceiling (to round-off) the stage sets the pace
        speed_m_s = min(power_speed_m_s, tool.stage_max_speed_m_s)
        limit = "stage"
    if speed_m_s == 0.0:
        return ThroughputResult(0.0, 0.0, math.inf, 0.0, stage_power_w, "power")
    wafer_time_s = time_per_wafer_s(tool, speed_m_s)
    return ThroughputResult(
        wafers_per_hour=SECONDS_PER_HOUR / wafer_time_s,
        scan_speed_m_s=speed_m_s,
        time_per_wafer_s=wafer_time_s,
        wafer_power_w=wafer_power_w,
        stage_limit_if_power_w=stage_power_w,
        limit=limit,
    )


def effective_dose(
    recipe_dose_j_m2: float, stochastic_floor_j_m2: float
) -> tuple[float, DoseSource]:
    """Dose to expose with: the larger of the recipe dose and the stochastic floor.

    Method: max(recipe, floor), common practice; the floor comes from
    :func:`beamplan.physics.shot_noise.stochastic_dose_floor_j_m2` (Poisson shot
    noise). A tie is reported as ``"recipe"``.

    Parameters
    ----------
    recipe_dose_j_m2 : float
        Recipe dose in J/m², > 0.
    stochastic_floor_j_m2 : float
        Stochastic dose floor in J/m², >= 0.

    Returns
    -------
    tuple of (float, {"recipe", "stochastic floor"})
        The dose in J/m² and which of the two set it.

    Examples
    --------
    >>> effective_dose(300.0, 324.7)
    (324.7, 'stochastic floor')
    >>> effective_dose(600.0, 324.7)
    (600.0, 'recipe')
    """
    require_dose(recipe_dose_j_m2)
    if not (stochastic_floor_j_m2 >= 0.0 and math.isfinite(stochastic_floor_j_m2)):
        raise ValueError(
            f"stochastic_floor_j_m2 must be non-negative and finite, got {stochastic_floor_j_m2!r}"
        )
    if stochastic_floor_j_m2 > recipe_dose_j_m2:
        return stochastic_floor_j_m2, "stochastic floor"
    return recipe_dose_j_m2, "recipe"

"""Stage-limited kinematics of a scanner: time per wafer, the stage limit, the useful ceiling.

The part of the throughput model (:mod:`beamplan.physics.demand`, whose docstring
gives the method; common practice, no single source) that does not depend on the
source power: how long a wafer takes at a scan speed, how many wafers per hour
the stage allows at full speed, and the IF power at which the light stops
setting the scan speed.

SI units throughout: m, s, W, J/m².
"""

from __future__ import annotations

import math

from beamplan.physics.scanner_tool import ScannerTool

__all__ = ["SECONDS_PER_HOUR", "if_to_exposure", "require_dose", "stage_limit_if_power_w",
           "stage_limited_wph", "time_per_wafer_s", "useful_ceiling_w"]

SECONDS_PER_HOUR = 3600.0


def require_dose(dose_j_m2: float) -> None:
    """Refuse a dose that is not positive and finite.

    Raises
    ------
    ValueError
        The dose is zero, negative, infinite or NaN.

    Examples
    --------
    >>> require_dose(300.0)
    >>> require_dose(0.0)
    Traceback (most recent call last):
    ...
    ValueError: dose_j_m2 must be positive and finite, got 0.0
    """
    if not (dose_j_m2 > 0.0 and math.isfinite(dose_j_m2)):
        raise ValueError(f"dose_j_m2 must be positive and finite, got {dose_j_m2!r}")


def time_per_wafer_s(tool: ScannerTool, scan_speed_m_s: float) -> float:
    """Time to expose one wafer at a scan speed.

    Method: wafer overhead + N_fields × (field overhead + scan length / v)
    (common practice, no source).

    Parameters
    ----------
    tool : ScannerTool
        The scanner.
    scan_speed_m_s : float
        Scan speed in m/s, > 0.

    Returns
    -------
    float
        Time per wafer in s.

    Examples
    --------
    >>> round(time_per_wafer_s(ScannerTool(), 0.8), 4)
    18.0
    """
    if not scan_speed_m_s > 0.0:
        raise ValueError(f"scan_speed_m_s must be positive, got {scan_speed_m_s!r}")
    per_field_s = tool.field_overhead_s + tool.scan_length_m / scan_speed_m_s
    return tool.wafer_overhead_s + tool.fields_per_wafer * per_field_s


def stage_limited_wph(tool: ScannerTool) -> float:
    """Most wafers per hour the tool reaches at any power: the stage at full speed.

    Method: 3600 / time per wafer at the stage's maximum scan speed (common practice).

    Parameters
    ----------
    tool : ScannerTool
        The scanner.

    Returns
    -------
    float
        Stage-limited throughput in wafers per hour.

    Examples
    --------
    >>> round(stage_limited_wph(ScannerTool()), 3)
    200.0
    """
    return SECONDS_PER_HOUR / time_per_wafer_s(tool, tool.stage_max_speed_m_s)


def stage_limit_if_power_w(tool: ScannerTool, dose_j_m2: float) -> float:
    """IF power at which the power-limited scan speed reaches the stage maximum.

    Method: invert v = (1 − m) T P_IF / (D L) at v = v_stage (common practice).

    Parameters
    ----------
    tool : ScannerTool
        The scanner.
    dose_j_m2 : float
        Dose at the wafer in J/m², > 0.

    Returns
    -------
    float
        IF power in W; more than this buys no throughput.

    Examples
    --------
    >>> round(stage_limit_if_power_w(ScannerTool(), 300.0), 1)
    487.6
    """
    require_dose(dose_j_m2)
    wafer_power_w = dose_j_m2 * tool.slit_length_m * tool.stage_max_speed_m_s
    return wafer_power_w / if_to_exposure(tool)


def useful_ceiling_w(tool: ScannerTool, dose_j_m2: float) -> float:
    """The useful ceiling: the IF power above which more light buys no throughput.

    Method (common practice, no source; the throughput model of the module docstring):
    the scan speed ``v = min(v_stage, (1 − m) T P_IF / (D L))`` rises with IF power only
    until it reaches the stage's maximum, at ``P_IF = D L v_stage / ((1 − m) T)``; above
    it the stage, not the light, sets the wafer rate. The planner bounds the scanner by it.

    Parameters
    ----------
    tool : ScannerTool
        The scanner.
    dose_j_m2 : float
        Dose at the wafer in J/m², > 0 (the dose used, after any stochastic floor).

    Returns
    -------
    float
        The ceiling in W at IF.

    Examples
    --------
    >>> round(useful_ceiling_w(ScannerTool(), 300.0), 1)  # 30 mJ/cm², 0.8 m/s stage
    487.6
    >>> from beamplan.physics.demand import throughput_at_power
    >>> throughput_at_power(ScannerTool(), 300.0, 487.7).limit
    'stage'
    """
    return stage_limit_if_power_w(tool, dose_j_m2)


def if_to_exposure(tool: ScannerTool) -> float:
    """The fraction of the IF power that exposes the wafer: ``(1 − m) T_IF→wafer``.

    Method: dose-control margin ``m`` held back, then the optical train's
    transmission (:mod:`beamplan.physics.demand`'s docstring; common practice).

    Examples
    --------
    >>> tool = ScannerTool()  # a 10 % margin, about 1.42 % through the train
    >>> round(tool.dose_control_margin, 2), round(if_to_exposure(tool), 5)
    (0.1, 0.0128)
    """
    return (1.0 - tool.dose_control_margin) * tool.transmission_if_to_wafer()

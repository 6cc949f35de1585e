"""Wall-plug figures of the shared source: electrical power per EUV power delivered.

Method: energy bookkeeping (common practice, no source). The overall (wall-plug)
efficiency is the EUV power delivered at the scanners' IF divided by the electrical
power the whole plant draws (accelerator RF, cryogenics, magnets, cooling, transport
line). A chain of stages multiplies. For an electron beam, power = energy per
electron in eV × current in A (1 eV × 1 A = 1 W).

SI units: W for powers, A for currents, eV for electron energies.
"""

from __future__ import annotations

import math
from collections.abc import Iterable

__all__ = [
    "beam_power_w",
    "chain_efficiency",
    "electrical_draw_w",
    "electrical_kw_per_euv_kw",
    "electrical_power_w",
    "overall_efficiency",
]


def _require_positive(name: str, value: float) -> None:
    if not (value > 0.0 and math.isfinite(value)):
        raise ValueError(f"{name} must be positive and finite, got {value!r}")


def _require_efficiency(name: str, value: float) -> None:
    if not 0.0 < value <= 1.0:
        raise ValueError(f"{name} must be in (0, 1], got {value!r}")


def overall_efficiency(delivered_euv_power_w: float, electrical_power_w: float) -> float:
    """Wall-plug efficiency: EUV power delivered at the scanners / electrical power drawn.

    Method: energy bookkeeping, η = P_EUV / P_electrical (common practice).

    Parameters
    ----------
    delivered_euv_power_w : float
        EUV power delivered at the scanners' IF, summed, in W, >= 0.
    electrical_power_w : float
        Electrical power drawn by the plant in W, > 0.

    Returns
    -------
    float
        Efficiency (dimensionless).

    Raises
    ------
    ValueError
        On a negative EUV power, a non-positive electrical power, or η > 1.

    Examples
    --------
    >>> overall_efficiency(10e3, 20e6)
    0.0005
    """
    if not (delivered_euv_power_w >= 0.0 and math.isfinite(delivered_euv_power_w)):
        raise ValueError(
            f"delivered_euv_power_w must be non-negative and finite, got {delivered_euv_power_w!r}"
        )
    _require_positive("electrical_power_w", electrical_power_w)
    efficiency = delivered_euv_power_w / electrical_power_w
    if efficiency > 1.0:
        raise ValueError(
            f"EUV power {delivered_euv_power_w!r} W exceeds electrical power "
            f"{electrical_power_w!r} W: efficiency {efficiency:.3g} > 1"
        )
    return efficiency


def electrical_kw_per_euv_kw(delivered_euv_power_w: float, electrical_power_w: float) -> float:
    """Electrical kW drawn per kW of EUV delivered at the scanners, 1 / η.

    Method: energy bookkeeping, P_electrical / P_EUV (common practice).

    Parameters
    ----------
    delivered_euv_power_w : float
        EUV power delivered at the scanners' IF in W, > 0.
    electrical_power_w : float
        Electrical power drawn by the plant in W, > 0.

    Returns
    -------
    float
        kW (electrical) per kW (EUV), dimensionless.

    Examples
    --------
    >>> electrical_kw_per_euv_kw(10e3, 20e6)
    2000.0
    """
    _require_positive("delivered_euv_power_w", delivered_euv_power_w)
    return 1.0 / overall_efficiency(delivered_euv_power_w, electrical_power_w)


def electrical_power_w(delivered_euv_power_w: float, efficiency: float) -> float:
    """Electrical power needed to deliver an EUV power at a wall-plug efficiency.

    Method: P_electrical = P_EUV / η (common practice).

    Parameters
    ----------
    delivered_euv_power_w : float
        EUV power to deliver at the scanners' IF in W, >= 0.
    efficiency : float
        Overall efficiency in (0, 1].

    Returns
    -------
    float
        Electrical power in W.

    Examples
    --------
    >>> round(electrical_power_w(10e3, 5e-4) / 1e6, 3)  # MW
    20.0
    """
    if not (delivered_euv_power_w >= 0.0 and math.isfinite(delivered_euv_power_w)):
        raise ValueError(
            f"delivered_euv_power_w must be non-negative and finite, got {delivered_euv_power_w!r}"
        )
    _require_efficiency("efficiency", efficiency)
    return delivered_euv_power_w / efficiency


def electrical_draw_w(euv_output_w: float, fixed_w: float, per_euv_watt: float) -> float:
    """Wall-plug draw of a source giving ``euv_output_w``: a fixed part plus a part per watt.

    Method: a linear plant model (common practice, no source). Part of the draw
    does not depend on the light given (cryogenic plant, magnets, standby RF,
    cooling): ``fixed_w``; the rest (mainly the RF that accelerates the beam)
    scales with the EUV output: ``per_euv_watt`` W electrical per W of EUV.
    ``P_el = fixed + per_euv_watt × P_EUV``. For scale: an accelerator-driven
    source of about 10 kW EUV draws about 7 MW from the wall (common practice,
    no source).

    Parameters
    ----------
    euv_output_w : float
        EUV power the source gives, in W, >= 0.
    fixed_w : float
        Draw at zero output, in W, >= 0.
    per_euv_watt : float
        Extra electrical W per W of EUV, >= 0.

    Returns
    -------
    float
        Electrical power drawn, in W.

    Examples
    --------
    >>> electrical_draw_w(10e3, 2e6, 500.0) / 1e6  # 2 MW + 500 × 10 kW
    7.0
    >>> electrical_draw_w(0.0, 2e6, 500.0) / 1e6  # turned off: the fixed part remains
    2.0
    """
    for name, value in (("euv_output_w", euv_output_w), ("fixed_w", fixed_w),
                        ("per_euv_watt", per_euv_watt)):
        if not (value >= 0.0 and math.isfinite(value)):
            raise ValueError(f"{name} must be non-negative and finite, got {value!r}")
    return fixed_w + per_euv_watt * euv_output_w


def chain_efficiency(stage_efficiencies: Iterable[float]) -> float:
    """Overall efficiency of stages in series: the product of their efficiencies.

    Method: energy bookkeeping, η = Π η_i (common practice). An empty chain is 1.

    Parameters
    ----------
    stage_efficiencies : iterable of float
        Efficiency of each stage in (0, 1] (e.g. plug to beam, beam to EUV,
        EUV transport to IF).

    Returns
    -------
    float
        Overall efficiency in (0, 1].

    Examples
    --------
    >>> round(chain_efficiency([0.5, 1e-3, 0.8]), 6)
    0.0004
    """
    total = 1.0
    for index, value in enumerate(stage_efficiencies):
        _require_efficiency(f"stage_efficiencies[{index}]", value)
        total *= value
    return total


def beam_power_w(electron_energy_ev: float, average_current_a: float) -> float:
    """Power carried by an electron beam, P = (E / e) × I.

    Method: an electron of energy E eV carries E × e joules; a current I carries
    I / e electrons per second, so P[W] = E[eV] × I[A] (common practice).

    Parameters
    ----------
    electron_energy_ev : float
        Energy per electron in eV, >= 0 (kinetic energy for power deposited in a dump).
    average_current_a : float
        Average beam current in A, >= 0.

    Returns
    -------
    float
        Beam power in W.

    Examples
    --------
    >>> round(beam_power_w(1e9, 10e-3) / 1e6, 3)  # MW
    10.0
    """
    for name, value in (
        ("electron_energy_ev", electron_energy_ev),
        ("average_current_a", average_current_a),
    ):
        if not (value >= 0.0 and math.isfinite(value)):
            raise ValueError(f"{name} must be non-negative and finite, got {value!r}")
    return electron_energy_ev * average_current_a

"""Money and energy arithmetic of a source: annuities, energy per year, per wafer.

Methods (common practice, no source): capital is recovered over the service life
with the annuity (capital recovery) factor ``r / (1 - (1 + r)^-n)``, the textbook
formula of engineering economics (e.g. any engineering-economy text, "capital
recovery factor"); energy is power × hours; a share of a shared cost is allocated
in proportion to use. Amounts are plain numbers in the user's currency.
"""

from __future__ import annotations

import math

from beamplan.physics.demand import throughput_at_power
from beamplan.physics.scanner_tool import ScannerTool

__all__ = [
    "annual_capital",
    "annuity_factor",
    "break_even_count",
    "dose_for_throughput",
    "energy_mwh",
    "sources_needed",
]


def annuity_factor(rate: float, years: float) -> float:
    """Capital recovery factor: the yearly payment per unit of capital.

    Method: ``A/C = r / (1 - (1 + r)^-n)``, the annuity (capital recovery)
    factor of engineering economics (common practice, no source); ``1/n`` at
    ``r = 0`` (its limit).

    Parameters
    ----------
    rate : float
        Discount rate per year, >= 0 (0.08 for 8 %).
    years : float
        Service life in years, > 0.

    Returns
    -------
    float
        Payment per year per unit of capital.

    Examples
    --------
    >>> round(annuity_factor(0.08, 20), 6)  # hand calculation: 0.08 / (1 - 1.08**-20)
    0.101852
    >>> annuity_factor(0.0, 10)
    0.1
    """
    if not (rate >= 0.0 and math.isfinite(rate)):
        raise ValueError(f"rate must be non-negative and finite, got {rate!r}")
    if not (years > 0.0 and math.isfinite(years)):
        raise ValueError(f"years must be positive and finite, got {years!r}")
    if rate == 0.0:
        return 1.0 / years
    return float(rate / (1.0 - (1.0 + rate) ** -years))


def annual_capital(capital: float, rate: float, years: float) -> float:
    """The yearly cost of ``capital`` recovered over ``years`` at ``rate`` (annuity).

    Examples
    --------
    >>> round(annual_capital(400e6, 0.08, 20) / 1e6, 3)  # million per year
    40.741
    """
    if not (capital >= 0.0 and math.isfinite(capital)):
        raise ValueError(f"capital must be non-negative and finite, got {capital!r}")
    return capital * annuity_factor(rate, years)


def energy_mwh(power_w: float, hours: float) -> float:
    """Energy in MWh drawn at ``power_w`` for ``hours``: ``P × t / 1e6``.

    Examples
    --------
    >>> energy_mwh(7e6, 8000.0)  # 7 MW for 8000 h
    56000.0
    """
    if not (power_w >= 0.0 and hours >= 0.0):
        raise ValueError("power and hours must be non-negative")
    return power_w * hours / 1e6


def sources_needed(power_w: float, rated_w: float) -> int:
    """How many sources of ``rated_w`` give ``power_w``: ``ceil(P / P_rated)``, at least 1.

    A relative tolerance of 1e-9 keeps an exact multiple from asking for one more.

    Examples
    --------
    >>> sources_needed(10e3, 11e3), sources_needed(11e3, 11e3), sources_needed(11.5e3, 11e3)
    (1, 1, 2)
    """
    if not rated_w > 0.0:
        raise ValueError(f"rated_w must be positive, got {rated_w!r}")
    return max(1, math.ceil(power_w / rated_w * (1.0 - 1e-9)))


def break_even_count(fixed_per_source: float, rated_w: float, per_scanner_w: float,
                     variable_per_scanner: float, alternative_per_scanner: float,
                     max_count: int = 1000) -> int | None:
    """The smallest number of scanners at which a shared source costs less per year.

    Method: shared cost ``k(N) F + N v`` with ``k(N) = ceil(N p / P_rated)``
    sources, against ``N a`` for one source per scanner (common practice, no
    source: a step-fixed cost model). Without the step (``p`` small) the answer
    is ``ceil(F / (a - v))``.

    Parameters
    ----------
    fixed_per_source : float
        Yearly cost of one shared source that does not depend on the scanners.
    rated_w : float
        The power one shared source gives.
    per_scanner_w : float
        The shared-source power one scanner takes.
    variable_per_scanner : float
        Yearly shared cost that grows with each scanner (electricity per scanner).
    alternative_per_scanner : float
        Yearly cost of one scanner's own source.
    max_count : int
        Look no further than this.

    Returns
    -------
    int or None
        ``None`` when the shared source never wins up to ``max_count``.

    Examples
    --------
    >>> break_even_count(90.0, 10e3, 500.0, 1.0, 11.0)  # hand calculation: ceil(90 / 10)
    9
    >>> break_even_count(90.0, 10e3, 500.0, 12.0, 11.0) is None
    True
    """
    for count in range(1, max_count + 1):
        shared = sources_needed(count * per_scanner_w, rated_w) * fixed_per_source \
            + count * variable_per_scanner
        if shared <= count * alternative_per_scanner:
            return count
    return None


def dose_for_throughput(tool: ScannerTool, if_power_w: float, wafers_per_hour: float) -> float:
    """The dose (J/m²) at which ``tool`` exposes ``wafers_per_hour`` with ``if_power_w``.

    Method: bisection on the dose of :func:`beamplan.physics.demand.throughput_at_power`
    (throughput falls as the dose rises; common practice, no source). Used to give
    a scanner stated by plain watts a throughput model: its need reaches the stated
    wafers per hour.

    Raises
    ------
    ValueError
        When ``wafers_per_hour`` is at or above what the stage allows at any power.

    Examples
    --------
    >>> tool = ScannerTool()
    >>> dose = dose_for_throughput(tool, 200.0, 149.75)
    >>> round(dose, 1)  # the example of throughput_at_power: 300 J/m² at 200 W
    300.0
    """
    if not (if_power_w > 0.0 and wafers_per_hour > 0.0):
        raise ValueError("power and wafers per hour must be positive")
    low, high = 1e-3, 1e6
    if throughput_at_power(tool, low, if_power_w).wafers_per_hour <= wafers_per_hour:
        raise ValueError(f"{wafers_per_hour:g} wafers per hour is beyond what the stage allows")
    for _ in range(200):
        mid = math.sqrt(low * high)
        if throughput_at_power(tool, mid, if_power_w).wafers_per_hour > wafers_per_hour:
            low = mid
        else:
            high = mid
        if high / low < 1 + 1e-13:
            break
    return math.sqrt(low * high)

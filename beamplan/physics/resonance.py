"""Whether a declared FEL source wavelength is reachable with its undulator and beam.

Method: the planar-undulator resonance of :mod:`beamplan.physics.undulator`
(X-ray Data Booklet, section 2.1), compared with the declared wavelength within
a relative tolerance, for a fixed K or a K the gap can tune up to a maximum.
SI units inside: m, T, eV for energies.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from beamplan.physics.undulator import (
    ResonanceError,
    k_for_wavelength,
    resonant_wavelength_m,
    undulator_k,
)

__all__ = ["ResonanceCheck", "resonance_check"]


@dataclass(frozen=True)
class ResonanceCheck:
    """Outcome of :func:`resonance_check`.

    Attributes
    ----------
    reachable : bool
        Whether the declared wavelength is reachable within the tolerance.
    wavelength_m : float
        The declared wavelength.
    resonant_wavelength_m : float
        Resonance at the given K (at K_max when ``tunable``).
    relative_error : float
        resonant / declared − 1.
    k : float
        The given K (or the one from the given peak field).
    k_required : float or None
        K that hits the declared wavelength exactly; ``None`` if none does (K² < 0).
    shortest_wavelength_m : float
        Resonance at K = 0, the shortest this beam and period can radiate.
    message : str
        One-line explanation for reports.
    """

    reachable: bool
    wavelength_m: float
    resonant_wavelength_m: float
    relative_error: float
    k: float
    k_required: float | None
    shortest_wavelength_m: float
    message: str


def resonance_check(
    wavelength_m: float,
    electron_energy_ev: float,
    period_m: float,
    *,
    k: float | None = None,
    peak_field_t: float | None = None,
    tolerance: float = 0.01,
    harmonic: int = 1,
    tunable: bool = False,
) -> ResonanceCheck:
    """Check that a declared source wavelength matches its undulator and beam.

    Method: planar-undulator resonance (X-ray Data Booklet, section 2.1). With a fixed
    K, the declared wavelength is reachable when ``|λ_res / λ − 1| <= tolerance``.
    With ``tunable=True`` the given K is the largest the gap allows, and it is
    reachable when λ lies in ``[λ(K=0) (1 − tol), λ(K) (1 + tol)]``. The default
    tolerance of 1 % allows for declared values rounded to 2-3 significant figures
    (common practice, no source).

    Parameters
    ----------
    wavelength_m : float
        Declared wavelength in m.
    electron_energy_ev : float
        Total electron energy in eV.
    period_m : float
        Undulator period in m.
    k, peak_field_t : float, optional
        Give exactly one: the deflection parameter or the peak field in T.
    tolerance : float, optional
        Relative tolerance on the wavelength, >= 0, default 0.01.
    harmonic : int, optional
        Odd harmonic number, default 1.
    tunable : bool, optional
        Treat K as a maximum (variable gap), default False.

    Returns
    -------
    ResonanceCheck
        Whether it is reachable, the resonance, the K required and a message.

    Examples
    --------
    >>> r = resonance_check(13.5e-9, 1e9, 0.028, k=2.32)
    >>> r.reachable, round(r.k_required, 3)
    (True, 2.321)
    >>> resonance_check(13.5e-9, 1e9, 0.028, peak_field_t=0.5).reachable
    False
    >>> resonance_check(13.5e-9, 1e9, 0.028, peak_field_t=1.0, tunable=True).reachable
    True
    """
    if k is not None and peak_field_t is None:
        k_value = k
    elif peak_field_t is not None and k is None:
        k_value = undulator_k(peak_field_t, period_m)
    else:
        raise ValueError("give exactly one of k and peak_field_t")
    if not (tolerance >= 0.0 and math.isfinite(tolerance)):
        raise ValueError(f"tolerance must be non-negative and finite, got {tolerance!r}")
    if not (wavelength_m > 0.0 and math.isfinite(wavelength_m)):
        raise ValueError(f"wavelength_m must be positive and finite, got {wavelength_m!r}")
    resonant_m = resonant_wavelength_m(electron_energy_ev, period_m, k_value, harmonic)
    shortest_m = resonant_wavelength_m(electron_energy_ev, period_m, 0.0, harmonic)
    try:
        k_required: float | None = k_for_wavelength(
            wavelength_m, electron_energy_ev, period_m, harmonic
        )
    except ResonanceError:
        k_required = None
    relative_error = resonant_m / wavelength_m - 1.0
    if tunable:
        reachable = shortest_m * (1.0 - tolerance) <= wavelength_m <= resonant_m * (1.0 + tolerance)
        span = f"tunable {shortest_m * 1e9:.4g}-{resonant_m * 1e9:.4g} nm (K <= {k_value:.4g})"
    else:
        reachable = abs(relative_error) <= tolerance
        span = f"resonance {resonant_m * 1e9:.4g} nm at K = {k_value:.4g} ({relative_error:+.2%})"
    needed = "no K reaches it" if k_required is None else f"K needed {k_required:.4g}"
    verdict = "reachable" if reachable else "not reachable"
    message = f"{wavelength_m * 1e9:.4g} nm is {verdict}: {span}; {needed}"
    return ResonanceCheck(
        reachable=reachable,
        wavelength_m=wavelength_m,
        resonant_wavelength_m=resonant_m,
        relative_error=relative_error,
        k=k_value,
        k_required=k_required,
        shortest_wavelength_m=shortest_m,
        message=message,
    )

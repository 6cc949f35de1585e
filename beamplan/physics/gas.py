"""Photoabsorption of EUV light in a gas-filled drift (Beer–Lambert law).

``T = exp(−n σ L)`` with the ideal-gas number density ``n = p / (k_B T)`` and
the photoabsorption cross-section per molecule ``σ = Σ_atoms 2 r_e λ f2``
(optical theorem), with f2 from B. L. Henke, E. M. Gullikson, J. C. Davis,
*At. Data Nucl. Data Tables* 54 (1993) 181 as shipped with ``periodictable``.
SI units throughout; periodictable is imported only when a cross-section is
first needed.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType

__all__ = [
    "AIR_MOLAR_FRACTIONS",
    "BOLTZMANN_J_K",
    "CLASSICAL_ELECTRON_RADIUS_M",
    "GasTransmission",
    "gas_transmission",
    "photoabsorption_cross_section",
]

#: Boltzmann constant, exact in the SI since 2019 (CODATA 2018 and 2022).
BOLTZMANN_J_K = 1.380649e-23
#: Classical electron radius r_e, CODATA 2022 (as in scipy.constants).
CLASSICAL_ELECTRON_RADIUS_M = 2.8179403205e-15
#: hc in eV·m from the exact SI values of h, c and e.
_HC_EV_M = 6.62607015e-34 * 299792458.0 / 1.602176634e-19

#: Dry air, molar fractions (rounded from the U.S. Standard Atmosphere 1976,
#: CO2 raised to about 400 ppm; common practice).
AIR_MOLAR_FRACTIONS: Mapping[str, float] = MappingProxyType(
    {"N2": 0.7808, "O2": 0.2095, "Ar": 0.0093, "CO2": 0.0004}
)

_HENKE = "Henke, Gullikson & Davis, At. Data Nucl. Data Tables 54 (1993) 181 (f2 via periodictable)"


@dataclass(frozen=True)
class GasTransmission:
    """Result of :func:`gas_transmission`.

    Attributes
    ----------
    transmission
        Fraction of the power that crosses the drift, ``exp(−n σ L)``.
    number_density_m3
        Molecules per m³, ``p / (k_B T)``.
    cross_section_m2
        Photoabsorption cross-section per molecule (mean over a mixture), m².
    method
        Method and sources.
    """

    transmission: float
    number_density_m3: float
    cross_section_m2: float
    method: str

    @property
    def attenuation_length_m(self) -> float:
        """``1 / (n σ)``: the length over which the power falls by 1/e (inf in vacuum)."""
        product = self.number_density_m3 * self.cross_section_m2
        return math.inf if product == 0 else 1.0 / product


def _check(value: float, name: str, *, positive: bool) -> float:
    number = float(value)
    if not math.isfinite(number) or number < 0 or (positive and number == 0):
        raise ValueError(
            f"{name} must be a finite number {'> 0' if positive else '>= 0'}, got {value!r}"
        )
    return number


@functools.lru_cache(maxsize=1024)
def _molecule_cross_section(formula: str, wavelength_m: float) -> float:
    import periodictable

    try:
        molecule = periodictable.formula(formula)
    except Exception as exc:  # pyparsing.ParseException or ValueError("unknown element")
        raise ValueError(
            f"unknown gas {formula!r}: give 'air' or a chemical formula such as 'N2' or 'H2O' "
            f"({exc})"
        ) from exc
    if not molecule.atoms:
        raise ValueError(f"gas formula {formula!r} contains no atoms")
    energy_kev = _HC_EV_M / wavelength_m * 1e-3
    f2_sum = 0.0
    for atom, count in molecule.atoms.items():
        factors = atom.xray.scattering_factors(energy=energy_kev)
        f2 = factors[1]
        if f2 is None or not math.isfinite(float(f2)):
            raise ValueError(
                f"no Henke f2 for {atom} at {wavelength_m * 1e9:.4g} nm "
                f"({energy_kev * 1e3:.4g} eV); the tables span about 10 eV to 30 keV"
            )
        f2_sum += float(count) * float(f2)
    return 2.0 * CLASSICAL_ELECTRON_RADIUS_M * wavelength_m * f2_sum


def photoabsorption_cross_section(gas: str, wavelength_m: float) -> float:
    """Photoabsorption cross-section per molecule of a gas, in m².

    Parameters
    ----------
    gas
        ``"air"`` (any case; :data:`AIR_MOLAR_FRACTIONS`, mole-weighted mean) or
        a chemical formula: ``"H2"``, ``"He"``, ``"N2"``, ``"O2"``, ``"Ar"``,
        ``"Ne"``, ``"Kr"``, ``"Xe"``, ``"H2O"``, ``"CO2"``, ...
    wavelength_m
        Vacuum wavelength in metres.

    Returns
    -------
    float
        ``σ = Σ_atoms 2 r_e λ f2`` (cached), with f2 interpolated log-log in the
        Henke et al. (1993) tables by periodictable.

    Notes
    -----
    Optical theorem for the atomic photoabsorption cross-section,
    ``σ_a = 2 r_e λ f2`` (X-ray Data Booklet, section 1.7; Henke et al.,
    *At. Data Nucl. Data Tables* 54 (1993) 181). Molecular binding is ignored
    (independent-atom approximation), as in the tables.

    Examples
    --------
    >>> round(photoabsorption_cross_section("Ar", 13.5e-9) * 1e22, 2)
    1.39
    """
    lam = _check(wavelength_m, "wavelength_m", positive=True)
    if not isinstance(gas, str) or not gas.strip():
        raise ValueError(f"gas must be 'air' or a chemical formula, got {gas!r}")
    if gas.strip().lower() == "air":
        return sum(x * _molecule_cross_section(f, lam) for f, x in AIR_MOLAR_FRACTIONS.items())
    return _molecule_cross_section(gas.strip(), lam)


def gas_transmission(
    gas: str, pressure_pa: float, temperature_k: float, length_m: float, wavelength_m: float
) -> GasTransmission:
    """Transmission of a gas-filled drift (Beer–Lambert law, ideal gas).

    Parameters
    ----------
    gas
        ``"air"`` or a chemical formula (see :func:`photoabsorption_cross_section`).
    pressure_pa
        Gas pressure in Pa (>= 0).
    temperature_k
        Gas temperature in K (> 0).
    length_m
        Path length in the gas, in m (>= 0).
    wavelength_m
        Vacuum wavelength in metres.

    Returns
    -------
    GasTransmission

    Raises
    ------
    ValueError
        Unknown gas, wavelength outside the tables, or a negative pressure,
        length or temperature.

    Notes
    -----
    ``T = exp(−n σ L)``, ``n = p / (k_B T)`` (Beer–Lambert; ideal gas, k_B exact
    CODATA), ``σ = Σ 2 r_e λ f2`` from Henke et al., *At. Data Nucl. Data
    Tables* 54 (1993) 181 via periodictable.

    Examples
    --------
    Two metres of hydrogen at 10 Pa, 300 K:

    >>> t = gas_transmission("H2", 10.0, 300.0, 2.0, 13.5e-9)
    >>> round(t.transmission, 3), f"{t.number_density_m3:.3e}"
    (0.976, '2.414e+21')
    >>> round(gas_transmission("air", 1e-6, 293.15, 10.0, 13.5e-9).transmission, 5)
    1.0
    """
    p = _check(pressure_pa, "pressure_pa", positive=False)
    temperature = _check(temperature_k, "temperature_k", positive=True)
    length = _check(length_m, "length_m", positive=False)
    sigma = photoabsorption_cross_section(gas, wavelength_m)
    density = p / (BOLTZMANN_J_K * temperature)
    return GasTransmission(
        transmission=math.exp(-density * sigma * length),
        number_density_m3=density,
        cross_section_m2=sigma,
        method=f"Beer–Lambert, ideal gas n = p/(k_B T), σ = Σ 2 r_e λ f2; {_HENKE}",
    )

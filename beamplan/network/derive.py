"""Derive gains and needs from physics: where layout specs meet the physics layer.

A mirror given by its coating and grazing angle (Fresnel equations with the
Névot–Croce factor, Henke tables) or by a multilayer (Parratt recursion); a
drift given by its gas fill (Beer–Lambert law); a scanner given by its dose
and throughput (the scanner throughput model, with an optional stochastic
dose floor from photon shot noise); a source's undulator resonance check.
Each function returns the value and a provenance string for the report.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

from beamplan.layout.model import (
    DemandSpec,
    DriftSpec,
    MirrorSpec,
    MultilayerSpec,
    SourceSpec,
)

if TYPE_CHECKING:
    from beamplan.physics.multilayer import Interlayers

__all__ = ["ScannerDemand", "describe_multilayer", "drift_transmission", "mirror_gain",
           "physics_interlayers", "polarisation_words", "scanner_demand", "source_check",
           "stack_reflectivity"]


def polarisation_words(s_polarisation: float) -> str:
    """The light's polarisation at a mirror in words, for provenance texts.

    ``s_polarisation`` is the degree along s in [-1, 1]; the s-polarised share
    of the power is (1 + s) / 2.

    Examples
    --------
    >>> polarisation_words(-0.95), polarisation_words(0.5), polarisation_words(0.0)
    (', light 97.5% p-polarised', ', light 75.0% s-polarised', '')
    """
    if abs(s_polarisation) < 5e-4:
        return ""
    s_share = (1.0 + s_polarisation) / 2.0
    if s_share >= 0.5:
        return f", light {100 * s_share:.1f}% s-polarised"
    return f", light {100 * (1.0 - s_share):.1f}% p-polarised"


def mirror_gain(spec: MirrorSpec, wavelength_m: float, s_polarisation: float
                ) -> tuple[float, str]:
    """The reflectivity of a mirror and where it came from.

    Parameters
    ----------
    s_polarisation
        Degree of polarisation along s at this mirror, in [-1, 1] (0 unpolarised).

    Examples
    --------
    >>> from beamplan.layout.model import CoatingSpec
    >>> spec = MirrorSpec("m1", coating=CoatingSpec("Ru"), grazing_rad=0.0873)
    >>> value, how = mirror_gain(spec, 13.5e-9, 0.0)
    >>> 0.9 < value < 1.0, how.startswith("Ru at 5.00 deg grazing")
    (True, True)
    """
    if spec.reflectivity is not None:
        return spec.reflectivity, "given in the layout"
    pol = polarisation_words(s_polarisation)
    rough = f", roughness {spec.roughness_m * 1e9:.2f} nm" if spec.roughness_m else ""
    if spec.coating is not None and spec.grazing_rad is not None:
        from beamplan.physics.optics import mirror_reflectivity

        c = spec.coating
        measured = complex(c.delta, c.beta) if c.delta is not None and c.beta is not None \
            else None
        result = mirror_reflectivity(c.material, spec.grazing_rad, wavelength_m,
                                     density_g_cm3=c.density_g_cm3,
                                     roughness_m=spec.roughness_m,
                                     polarisation=s_polarisation, delta_beta=measured)
        source = "measured δ, β" if measured is not None else "Henke tables"
        return result.reflectivity, (
            f"{c.material} at {math.degrees(spec.grazing_rad):.2f} deg grazing{rough}{pol}: "
            f"Fresnel with Névot–Croce ({source})")
    ml = spec.multilayer
    assert ml is not None and spec.incidence_rad is not None
    reflectivity = stack_reflectivity(ml, spec.incidence_rad, wavelength_m, s_polarisation)
    return reflectivity, (
        f"{describe_multilayer(ml)}, {math.degrees(spec.incidence_rad):.1f} deg "
        f"incidence{pol}: Parratt recursion with Névot–Croce roughness (Henke tables)")


def describe_multilayer(ml: MultilayerSpec) -> str:
    """A multilayer spec in a few words, for provenance and warnings.

    Examples
    --------
    >>> describe_multilayer(MultilayerSpec())
    'Mo/Si × 50, period 6.90 nm, Ru cap 2.0 nm, MoSi2 interlayers 1.0/0.5 nm, roughness 0.40 nm'
    """
    cap = f", {ml.cap} cap {ml.cap_thickness_m * 1e9:.1f} nm" if ml.cap else ""
    il = ml.interlayers
    inter = ("" if il is None else f", {il.material} interlayers "
             f"{il.absorber_on_spacer_m * 1e9:.1f}/{il.spacer_on_absorber_m * 1e9:.1f} nm")
    rough = f", roughness {ml.roughness_m * 1e9:.2f} nm" if ml.roughness_m else ""
    return (f"{ml.absorber}/{ml.spacer} × {ml.periods}, period {ml.period_m * 1e9:.2f} nm"
            f"{cap}{inter}{rough}")


def stack_reflectivity(ml: MultilayerSpec, incidence_rad: float, wavelength_m: float,
           s_polarisation: float) -> float:
    """A multilayer spec's reflectivity (Parratt recursion, Henke tables).

    Examples
    --------
    >>> round(stack_reflectivity(MultilayerSpec(), 0.0, 13.5e-9, 0.0), 3)
    0.7
    """
    from beamplan.physics.multilayer import multilayer_reflectivity

    return multilayer_reflectivity((ml.absorber, ml.spacer), ml.period_m, ml.absorber_fraction,
                                   ml.periods, incidence_rad, wavelength_m,
                                   capping=(ml.cap, ml.cap_thickness_m) if ml.cap else None,
                                   substrate=ml.substrate, roughness_m=ml.roughness_m,
                                   polarisation=s_polarisation,
                                   interlayers=physics_interlayers(ml)).reflectivity


def physics_interlayers(ml: MultilayerSpec) -> Interlayers | None:
    """The physics layer's :class:`~beamplan.physics.multilayer.Interlayers` of a spec.

    Examples
    --------
    >>> physics_interlayers(MultilayerSpec()).material
    'MoSi2'
    """
    from beamplan.physics.multilayer import Interlayers

    il = ml.interlayers
    return None if il is None else Interlayers(il.material, il.absorber_on_spacer_m,
                                               il.spacer_on_absorber_m, il.density_g_cm3)


def drift_transmission(spec: DriftSpec, wavelength_m: float) -> tuple[float, str]:
    """The transmission of a drift and where it came from.

    Examples
    --------
    >>> from beamplan.layout.model import GasFillSpec
    >>> spec = DriftSpec("d1", fill=GasFillSpec("H2", 2.0, 295.0, 40.0))
    >>> value, how = drift_transmission(spec, 13.5e-9)
    >>> 0.9 < value < 1.0, "Beer–Lambert" in how
    (True, True)
    """
    if spec.transmission is not None:
        return spec.transmission, "given in the layout"
    fill = spec.fill
    assert fill is not None
    from beamplan.physics.gas import gas_transmission

    result = gas_transmission(fill.gas, fill.pressure_pa, fill.temperature_k, fill.length_m,
                              wavelength_m)
    return result.transmission, (
        f"{fill.gas} at {fill.pressure_pa:.3g} Pa, {fill.temperature_k:.0f} K over "
        f"{fill.length_m:.3g} m: Beer–Lambert (Henke tables)")


@dataclass(frozen=True)
class ScannerDemand:
    """A scanner's demand model, resolved: the tool, the dose used and its origin."""

    tool: object  # beamplan.physics.demand.ScannerTool
    dose_j_m2: float
    dose_set_by: str  # "recipe" or "stochastic floor"
    recipe_dose_j_m2: float
    target_wph: float
    need_w: float
    limit: str


def scanner_demand(spec: DemandSpec, wavelength_m: float) -> ScannerDemand:
    """Resolve a scanner's dose and throughput into its IF power need.

    Raises
    ------
    ValueError
        When the target throughput is beyond the stage at any power, or a
        tool value is out of range (the message says which).

    Examples
    --------
    >>> demand = scanner_demand(DemandSpec(300.0, 150.0), 13.5e-9)
    >>> demand.dose_set_by, round(demand.need_w, 1)
    ('recipe', 200.8)
    """
    from beamplan.physics.demand import (
        ScannerTool,
        effective_dose,
        required_if_power,
    )

    fields = {name: (int(value) if name in ("fields_per_wafer", "mirror_reflections")
                     else value) for name, value in spec.tool}
    if spec.train_multilayer is not None:
        ml = spec.train_multilayer
        fields["mirror_reflectivity"] = stack_reflectivity(ml, spec.train_incidence_rad,
                                                           wavelength_m, 0.0)
    tool = ScannerTool(**fields)  # type: ignore[arg-type]
    dose, set_by = spec.dose_j_m2, "recipe"
    if spec.critical_area_m2 is not None:
        from beamplan.physics.shot_noise import absorbed_fraction, stochastic_dose_floor_j_m2

        assert spec.resist_absorption_per_m is not None and spec.resist_thickness_m is not None
        assert spec.noise is not None
        fraction = absorbed_fraction(spec.resist_absorption_per_m, spec.resist_thickness_m)
        floor = stochastic_dose_floor_j_m2(wavelength_m, spec.critical_area_m2, fraction,
                                           spec.noise)
        dose, set_by = effective_dose(spec.dose_j_m2, floor)
    result = required_if_power(tool, dose, spec.wafers_per_hour)
    return ScannerDemand(tool, dose, set_by, spec.dose_j_m2, spec.wafers_per_hour,
                         result.if_power_w, str(result.limit))


def source_check(spec: SourceSpec, wavelength_m: float) -> str:
    """Check a source's undulator against the layout wavelength; return a note.

    Raises
    ------
    ValueError
        When the declared wavelength is not reachable (the message says why).

    Examples
    --------
    >>> source_check(SourceSpec("fel", 1e4), 13.5e-9)
    ''
    """
    u = spec.undulator
    if u is None:
        return ""
    from beamplan.physics.resonance import resonance_check

    check = resonance_check(wavelength_m, u.energy_ev, u.period_m, k=u.k,
                            peak_field_t=u.peak_field_t, tolerance=u.tolerance,
                            harmonic=u.harmonic, tunable=u.tunable)
    if not check.reachable:
        raise ValueError(check.message)
    return check.message

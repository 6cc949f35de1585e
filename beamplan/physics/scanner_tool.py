"""The description of one scanner for the throughput model (see :mod:`beamplan.physics.demand`).

SI units throughout: m, s; reflectivities and transmissions as fractions.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

__all__ = ["ScannerTool"]


@dataclass(frozen=True)
class ScannerTool:
    """One scanner: exposure geometry, timing, stage and IF-to-wafer optical train.

    Defaults are illustrative round numbers for a 0.33-NA-class full-field tool
    (common practice, no source; from memory where noted), not a measured machine.

    Parameters
    ----------
    field_width_m : float
        Field width across the scan, 26 mm. It is also the slit length.
    field_length_m : float
        Field length along the scan, 33 mm (16.5 mm for a half field).
    fields_per_wafer : int
        Exposures per 300 mm wafer, 96.
    slit_height_m : float
        Slit height along the scan, 2 mm. From memory: EUV ring-field slits are a
        few mm high (the 8 mm often quoted is a DUV figure). It only adds overscan.
    wafer_overhead_s : float
        Per-wafer time not spent in fields (exchange, alignment), 9 s.
    field_overhead_s : float
        Per-field time not spent scanning (step, accelerate, settle), 0.05 s.
    stage_max_speed_m_s : float
        Maximum wafer-stage scan speed, 0.8 m/s.
    mirror_reflections : int
        Multilayer mirror reflections from IF to wafer, mask excluded, 10
        (about 11 with the mask; from memory).
    mirror_reflectivity : float
        Reflectivity of each multilayer mirror, 0.70 (best measured Mo/Si, about 0.70).
    mask_reflectivity : float
        Mean reflectivity of the patterned mask, 0.65.
    pellicle_transmission : float
        Pellicle single-pass transmission, 0.88 (crossed twice; 0.83-0.90 from memory).
    other_losses_factor : float
        Any further transmission factor in (0, 1] (filters, obscurations), 1.0.
    dose_control_margin : float
        Fraction of IF power held back for dose control, in [0, 1), 0.10.
    """

    field_width_m: float = 0.026
    field_length_m: float = 0.033
    fields_per_wafer: int = 96
    slit_height_m: float = 0.002
    wafer_overhead_s: float = 9.0
    field_overhead_s: float = 0.05
    stage_max_speed_m_s: float = 0.8
    mirror_reflections: int = 10
    mirror_reflectivity: float = 0.70
    mask_reflectivity: float = 0.65
    pellicle_transmission: float = 0.88
    other_losses_factor: float = 1.0
    dose_control_margin: float = 0.10

    def __post_init__(self) -> None:
        for name in ("field_width_m", "field_length_m", "slit_height_m", "stage_max_speed_m_s"):
            value = getattr(self, name)
            if not (value > 0.0 and math.isfinite(value)):
                raise ValueError(f"{name} must be positive and finite, got {value!r}")
        for name in ("wafer_overhead_s", "field_overhead_s"):
            value = getattr(self, name)
            if not (value >= 0.0 and math.isfinite(value)):
                raise ValueError(f"{name} must be non-negative and finite, got {value!r}")
        for name, least in (("fields_per_wafer", 1), ("mirror_reflections", 0)):
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, int) or value < least:
                raise ValueError(f"{name} must be an integer >= {least}, got {value!r}")
        for name in ("mirror_reflectivity", "mask_reflectivity", "pellicle_transmission"):
            value = getattr(self, name)
            if not 0.0 < value <= 1.0:
                raise ValueError(f"{name} must be in (0, 1], got {value!r}")
        if not 0.0 < self.other_losses_factor <= 1.0:
            raise ValueError(
                f"other_losses_factor must be in (0, 1], got {self.other_losses_factor!r}"
            )
        if not 0.0 <= self.dose_control_margin < 1.0:
            raise ValueError(
                f"dose_control_margin must be in [0, 1), got {self.dose_control_margin!r}"
            )

    @property
    def slit_length_m(self) -> float:
        """Slit length across the scan: the field width."""
        return self.field_width_m

    @property
    def scan_length_m(self) -> float:
        """Stage travel per field: field length plus slit height (overscan)."""
        return self.field_length_m + self.slit_height_m

    def transmission_if_to_wafer(self) -> float:
        """Optical transmission from IF to wafer, R^n × R_mask × T_pellicle² × other.

        Method: product of the train's factors (common practice); the pellicle is
        crossed twice, on the way to the mask and back. The dose-control margin is
        not part of it.

        Returns
        -------
        float
            Transmission in (0, 1].

        Examples
        --------
        >>> round(ScannerTool().transmission_if_to_wafer(), 6)
        0.014219
        """
        return (
            self.mirror_reflectivity**self.mirror_reflections
            * self.mask_reflectivity
            * self.pellicle_transmission**2
            * self.other_losses_factor
        )

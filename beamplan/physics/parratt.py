"""The Parratt recursion for the reflectivity of a stack of thin films.

L. G. Parratt, *Phys. Rev.* 95 (1954) 359 (equivalent to the transfer-matrix
method), with the interface roughness factor of L. Névot, P. Croce, *Rev. Phys.
Appl.* 15 (1980) 761 at every interface. Indices are ``n = 1 − δ + iβ``; angles
of incidence are from the surface normal, in radians; lengths in metres.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

__all__ = ["PARRATT_SOURCE", "parratt_amplitudes"]

PARRATT_SOURCE = "Parratt, Phys. Rev. 95 (1954) 359"

ComplexArray = NDArray[np.complex128]


def _kz(n: ComplexArray, in_plane: ComplexArray, k: NDArray[np.float64]) -> ComplexArray:
    """Normal wave-vector component ``k √(n² − (n₀ sin θ)²)``, root with Im ≥ 0."""
    root: ComplexArray = np.sqrt(n * n - in_plane * in_plane)
    root = np.where(root.imag < 0, -root, root)
    return root * k


def parratt_amplitudes(
    n_layers: Sequence[ArrayLike],
    thickness_m: Sequence[float],
    n_substrate: ArrayLike,
    incidence_rad: ArrayLike,
    wavelength_m: ArrayLike,
    *,
    roughness_m: float | Sequence[float] = 0.0,
    n_ambient: complex = 1.0,
) -> tuple[ComplexArray, ComplexArray]:
    """Amplitude reflection coefficients (r_s, r_p) of a layer stack (Parratt recursion).

    Parameters
    ----------
    n_layers
        Complex indices ``n = 1 − δ + iβ`` of the layers, top first; each a scalar
        or an array broadcasting with the angles and wavelengths (dispersive scans).
    thickness_m
        Layer thicknesses in metres, same order and length as ``n_layers``.
    n_substrate
        Complex index of the semi-infinite substrate.
    incidence_rad, wavelength_m
        Angle of incidence in the ambient from the normal (rad) and vacuum
        wavelength (m); scalars or arrays.
    roughness_m
        rms roughness of each interface in metres, top interface first
        (``len(n_layers) + 1`` values), or one value for all interfaces.
    n_ambient
        Index of the incidence medium (1 for vacuum).

    Returns
    -------
    tuple of numpy.ndarray
        ``(r_s, r_p)`` with the broadcast shape of the inputs. The p convention
        matches :func:`beamplan.physics.optics.fresnel_amplitudes`
        (``r_p = (n_b² k_a − n_a² k_b)/(n_b² k_a + n_a² k_b)`` per interface).

    Notes
    -----
    ``k_z,j = k √(n_j² − n₀² sin² θ)`` (Im ≥ 0); interface ``r_j`` times
    ``exp(−2 k_z,j k_z,j+1 σ_j²)`` (Névot & Croce, *Rev. Phys. Appl.* 15 (1980) 761);
    from the substrate up, ``R_j = (r_j + R_j+1 X) / (1 + r_j R_j+1 X)`` with
    ``X = exp(2i k_z,j+1 d_j+1)`` (L. G. Parratt, *Phys. Rev.* 95 (1954) 359).

    Examples
    --------
    A quarter-wave film on a substrate at normal incidence (no absorption):

    >>> r_s, r_p = parratt_amplitudes([1.5], [100e-9 / 1.5 / 4], 2.0, 0.0, 100e-9)
    >>> round(float(abs(r_s) ** 2), 4)
    0.0035
    """
    if len(n_layers) != len(thickness_m):
        raise ValueError("n_layers and thickness_m must have the same length")
    if isinstance(roughness_m, (int, float)):
        sigmas = [float(roughness_m)] * (len(n_layers) + 1)
    else:
        sigmas = [float(v) for v in roughness_m]
    if len(sigmas) != len(n_layers) + 1:
        raise ValueError("roughness_m needs one value per interface (len(n_layers) + 1)")
    if not all(math.isfinite(v) and v >= 0 for v in [*thickness_m, *sigmas]):
        raise ValueError("every thickness_m and roughness_m must be finite and >= 0")
    theta = np.asarray(incidence_rad, dtype=float)
    lam = np.asarray(wavelength_m, dtype=float)
    if not (np.all(lam > 0) and np.all(np.abs(theta) < math.pi / 2) and np.isfinite(lam).all()):
        raise ValueError("need finite wavelength_m > 0 and |incidence_rad| < π/2")

    k = 2.0 * math.pi / lam
    media = [np.asarray(n_ambient, dtype=complex)]
    media += [np.asarray(n, dtype=complex) for n in n_layers]
    media.append(np.asarray(n_substrate, dtype=complex))
    in_plane = media[0] * np.sin(theta)

    def interface(j: int, kz_a: ComplexArray, kz_b: ComplexArray) -> tuple[Any, Any]:
        eps_a, eps_b = media[j] ** 2, media[j + 1] ** 2
        r_s = (kz_a - kz_b) / (kz_a + kz_b)
        r_p = (eps_b * kz_a - eps_a * kz_b) / (eps_b * kz_a + eps_a * kz_b)
        if sigmas[j] > 0:
            factor = np.exp(-2.0 * kz_a * kz_b * sigmas[j] ** 2)
            r_s, r_p = r_s * factor, r_p * factor
        return r_s, r_p

    last = len(media) - 2  # interface between the bottom layer and the substrate
    kz_below = _kz(media[-1], in_plane, k)
    kz_above = _kz(media[last], in_plane, k)
    big_s, big_p = interface(last, kz_above, kz_below)
    for j in range(last - 1, -1, -1):
        kz_below, kz_above = kz_above, _kz(media[j], in_plane, k)
        phase = np.exp(2j * kz_below * thickness_m[j])
        r_s, r_p = interface(j, kz_above, kz_below)
        big_s = (r_s + big_s * phase) / (1.0 + r_s * big_s * phase)
        big_p = (r_p + big_p * phase) / (1.0 + r_p * big_p * phase)
    shape = np.broadcast_shapes(theta.shape, lam.shape, *(m.shape for m in media))
    out_s: ComplexArray = np.broadcast_to(np.asarray(big_s, dtype=complex), shape).copy()
    out_p: ComplexArray = np.broadcast_to(np.asarray(big_p, dtype=complex), shape).copy()
    return out_s, out_p

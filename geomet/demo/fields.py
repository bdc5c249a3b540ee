"""Smooth random fields for the demo geology: sums of random Fourier modes (seeded).

A field f(x) = sqrt(2/M) sum_m cos(k_m . x / L + phi_m), with wave vectors k_m drawn from a
standard normal and phases uniform on [0, 2 pi), is approximately a zero-mean, unit-variance
Gaussian random field with Gaussian covariance exp(-|h|^2 / (2 L^2)) for many modes.

References
----------
.. [1] Shinozuka, M. (1971). Simulation of multivariate and multidimensional random
   processes. Journal of the Acoustical Society of America 49(1B), 357-368.
   DOI: 10.1121/1.1912338
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from geomet.errors import InputDataError

_CHUNK = 262_144


@dataclass(frozen=True)
class FourierField:
    """A seeded smooth random field in 2 or 3 dimensions.

    Parameters
    ----------
    wave_vectors : ndarray, shape (M, D)
        Wave vectors already divided by the correlation length [1/m].
    phases : ndarray, shape (M,)
        Phases [rad].
    """

    wave_vectors: np.ndarray
    phases: np.ndarray

    @classmethod
    def make(
        cls,
        rng: np.random.Generator,
        length_m: float | tuple[float, ...],
        *,
        dims: int = 3,
        modes: int = 20,
    ) -> FourierField:
        """Draw a field with correlation length ``length_m`` [m] (one value or one per axis)."""
        lengths = np.broadcast_to(np.asarray(length_m, dtype=float), (dims,))
        k = rng.standard_normal((modes, dims)) / lengths
        phi = rng.uniform(0.0, 2.0 * np.pi, modes)
        return cls(k, phi)

    def __call__(self, *coords: np.ndarray) -> np.ndarray:
        """Field values (about N(0, 1)) at points given as separate coordinate arrays [m]."""
        pts = np.stack([np.asarray(c, dtype=float).ravel() for c in coords], axis=1)
        if pts.shape[1] != self.wave_vectors.shape[1]:
            msg = (
                f"field has {self.wave_vectors.shape[1]} dimensions; got {pts.shape[1]} "
                "coordinate arrays"
            )
            raise InputDataError(msg)
        out = np.empty(len(pts))
        scale = np.sqrt(2.0 / len(self.phases))
        k = self.wave_vectors
        for start in range(0, len(pts), _CHUNK):
            block = pts[start : start + _CHUNK]
            # element-wise products, not a BLAS matrix product: the same bits on every machine
            arg = self.phases + block[:, 0:1] * k[:, 0]
            for d in range(1, k.shape[1]):
                arg += block[:, d : d + 1] * k[:, d]
            np.cos(arg, out=arg)
            out[start : start + _CHUNK] = scale * arg.sum(axis=1)
        return out.reshape(np.shape(coords[0]))

"""Horizontal reflecting layers below the sources (off unless configured).

Examples: the ice-water interface under a floating ice shelf, a bedrock
interface, or a dense internal layer.  A reflector is a height and either a
fixed amplitude reflection coefficient or the index of the medium below it
(for Fresnel coefficients at the ray's incidence angle, applied by the
signal budget).
"""

import math

from firnray.checks import finite_float


class Reflector:
    """A horizontal reflector at height ``z``.

    Parameters
    ----------
    z : float
        Height of the layer [m], < 0 (below the surface).
    amplitude : float or complex, optional
        Fixed amplitude reflection coefficient, ``|r| <= 1``, used for both
        polarisations.
    n_below : float, optional
        Refractive index below the layer [1] (for example about 9 for
        liquid water at radio frequencies, from its permittivity of about 80:
        common practice); Fresnel coefficients at the incidence angle then
        apply.  Give ``amplitude`` or ``n_below``, not both.
    name : str, optional

    Raises
    ------
    ValueError
        For a layer at or above the surface, ``|amplitude| > 1``, a non-positive
        index, or both/neither of ``amplitude`` and ``n_below``.
    """

    def __init__(self, z, amplitude=None, n_below=None, name=""):
        self.z = finite_float("z", z)
        if self.z >= 0.0:
            raise ValueError(f"z must be below the surface (< 0 m), got {z!r}")
        if (amplitude is None) == (n_below is None):
            raise ValueError("give exactly one of amplitude (a fixed reflection coefficient) "
                             "and n_below (the index below the layer)")
        if amplitude is not None:
            amp = complex(amplitude)
            if not (math.isfinite(amp.real) and math.isfinite(amp.imag)) or abs(amp) > 1.0:
                raise ValueError(f"amplitude must be a reflection coefficient with |r| <= 1, "
                                 f"got {amplitude!r}")
            self.amplitude = amp
            self.n_below = None
        else:
            self.n_below = finite_float("n_below", n_below)
            if self.n_below <= 0:
                raise ValueError(f"n_below must be > 0, got {n_below!r}")
            self.amplitude = None
        self.name = str(name)

    def __repr__(self):
        what = (f"amplitude={self.amplitude!r}" if self.amplitude is not None
                else f"n_below={self.n_below!r}")
        return f"Reflector(z={self.z!r}, {what})"

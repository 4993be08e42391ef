"""Absorption along a ray: the integral of ds / L(z, f) over its path in the ice.

With the field attenuation length L (E ∝ exp(-s/L)), the field amplitude
surviving a ray is exp(-A) with

    A(f) = ∫ ds / L(z, f) = Σ_pieces ∫ n(z) / (w(z) L(z, f)) dz        (theory 8.1)

over the monotone pieces of the ray (``Ray.pieces``), ds/dz = n/w.  On each
piece the substitution z = z2 - (z2 - z1)(1 - t)^2 removes the 1/sqrt
singularity of a turning point at z2 (and resolves a near-horizontal end),
and Gauss-Legendre quadrature in t does the rest.  Air legs do not absorb.
"""

import numpy as np

from firnray.checks import finite_float

_NODES = {}


def _gauss(n):
    if n not in _NODES:
        x, w = np.polynomial.legendre.leggauss(n)
        _NODES[n] = (0.5 * (x + 1.0), 0.5 * w)
    return _NODES[n]


def _lengths(attenuation, z, frequencies):
    """L(z, f) [m] as an array (len(z), len(f)), from an object with .length or a callable."""
    zz = np.repeat(z[:, None], len(frequencies), axis=1)
    ff = np.repeat(frequencies[None, :], len(z), axis=0)
    if hasattr(attenuation, "length"):
        out = attenuation.length(zz, ff)
    elif callable(attenuation):
        out = attenuation(zz, ff)
    else:
        out = np.full(zz.shape, finite_float("attenuation", attenuation))
    out = np.broadcast_to(np.asarray(out, dtype=float), zz.shape)
    if not np.all(np.isfinite(out)) or np.any(out <= 0):
        raise ValueError("attenuation must give finite attenuation lengths > 0 m at every "
                         "height of the ray")
    return out


def absorption_exponent(ray, attenuation, frequencies, nodes=64):
    """Field absorption exponent A(f) = ∫ ds / L(z, f) along ``ray`` [1].

    Parameters
    ----------
    ray : Ray
        From ``firnray.find_rays``.
    attenuation : object with ``.length(z, frequency_mhz)``, callable ``L(z, f)``, or float
        Field attenuation length [m] (E ∝ exp(-s/L)) at height z [m] and
        frequency [MHz]; a number is a constant length.
    frequencies : float or array_like
        Frequencies [MHz].
    nodes : int, optional
        Gauss-Legendre nodes per monotone piece of the ray.

    Returns
    -------
    float or ndarray
        A(f) [1] (field e-folds); the field loss is 20 log10(e) A dB
        (= 8.686 A dB, the same number of dB as the power loss).
    """
    f = np.asarray(frequencies, dtype=float)
    flat = f.reshape(-1)
    if flat.size == 0 or not np.all(np.isfinite(flat)) or np.any(flat <= 0):
        raise ValueError(f"frequencies must be finite and > 0 MHz, got {frequencies!r}")
    t, wt = _gauss(int(nodes))
    total = np.zeros(flat.size)
    profile = ray._profile
    for z1, z2, _ in ray.pieces():
        z = z2 - (z2 - z1) * (1.0 - t) ** 2
        dz_dt = 2.0 * (z2 - z1) * (1.0 - t)
        n = profile.index(np.minimum(z, 0.0))
        w = ray.vertical_slowness(z)
        with np.errstate(divide="ignore", invalid="ignore"):
            ds_dt = np.where(w > 0, n * dz_dt / w, 0.0)
        lengths = _lengths(attenuation, z, flat)
        total += np.sum((wt * ds_dt)[:, None] / lengths, axis=0)
    total = total.reshape(f.shape)
    return float(total) if total.ndim == 0 else total

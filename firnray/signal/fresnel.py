"""Fresnel coefficients of a plane wave at a flat boundary between two lossless media.

Geometry and sign convention
----------------------------
The boundary is the plane z = 0.  Medium 1 (index ``n1``, the incident side)
fills z < 0, medium 2 (index ``n2``) fills z > 0, and the unit normal
``z_hat`` points from medium 1 into medium 2.  The plane of incidence is the
x-z plane; the angle of incidence ``theta_i`` is measured from the normal.
Unit propagation vectors::

    incident       k_i = ( sin theta_i, 0,  cos theta_i)
    reflected      k_r = ( sin theta_i, 0, -cos theta_i)
    transmitted    k_t = ( sin theta_t, 0,  cos theta_t)

For every wave the s ("perpendicular") unit vector is
``s = z_hat x k / |z_hat x k| = y_hat`` (at normal incidence it is taken as
``y_hat`` too) and the p ("parallel", in the plane of incidence) unit vector is
``p = k x s``::

    p_i = (-cos theta_i, 0, sin theta_i)
    p_r = ( cos theta_i, 0, sin theta_i)
    p_t = (-cos theta_t, 0, sin theta_t)

An electric field ``E = E_s s + E_p p`` then has the amplitude ratios
(reflected or transmitted over incident, same polarisation)::

    r_s = (n1 cos theta_i - n2 cos theta_t) / (n1 cos theta_i + n2 cos theta_t)
    r_p = (n2 cos theta_i - n1 cos theta_t) / (n2 cos theta_i + n1 cos theta_t)
    t_s = 2 n1 cos theta_i / (n1 cos theta_i + n2 cos theta_t)
    t_p = 2 n1 cos theta_i / (n2 cos theta_i + n1 cos theta_t)

so at normal incidence ``r_p = -r_s = (n2 - n1) / (n2 + n1)`` (``p_i`` and
``p_r`` point opposite ways there), and ``t_s = t_p = 2 n1 / (n1 + n2)``.
These have the algebraic form of Jackson (1999) and Hecht (2002); the
``tmm`` package returns the same complex numbers, signs included (checked in
``tests/test_fresnel.py``; see ``docs/fresnel_conventions.md``).

Time dependence is ``exp(-i omega t)`` (fields ``exp(i (k.r - omega t))``).
Past the critical angle (``n1 sin theta_i > n2``) ``sin theta_t > 1`` and
``cos theta_t = +i sqrt(sin^2 theta_t - 1)``, the root whose transmitted field
decays as ``exp(-n2 k0 sqrt(sin^2 theta_t - 1) z)`` away from the boundary;
then ``|r_s| = |r_p| = 1`` with phases
``-2 arctan(n2 sqrt(sin^2 theta_t - 1) / (n1 cos theta_i))`` (s) and
``-2 arctan(n1 sqrt(sin^2 theta_t - 1) / (n2 cos theta_i))`` (p), and no power
crosses the boundary.  For the ``exp(+j omega t)`` convention take the complex
conjugate of ``r`` and ``t``.

Power coefficients: ``R = |r|^2`` and
``T = Re(n2 cos theta_t) / (n1 cos theta_i) |t|^2`` (ratio of the normal
components of the time-averaged Poynting vectors), so ``R + T = 1``.
"""

from dataclasses import dataclass

import numpy as np

__all__ = ["FresnelCoefficients", "fresnel", "critical_angle", "brewster_angle"]


@dataclass(frozen=True)
class FresnelCoefficients:
    """Fresnel coefficients of one boundary, for one or many incidences.

    Each attribute is a Python scalar when every input of :func:`fresnel` was
    a scalar, otherwise an array of the broadcast shape of the inputs.  The
    sign convention is the one of the module docstring of
    ``firnray.signal.fresnel``.

    Attributes
    ----------
    r_s, r_p : complex or ndarray of complex
        Amplitude reflection coefficients, s and p polarisation [1].
    t_s, t_p : complex or ndarray of complex
        Amplitude transmission coefficients, s and p polarisation [1].
    R_s, R_p : float or ndarray
        Power reflection coefficients ``|r|^2`` [1].
    T_s, T_p : float or ndarray
        Power transmission coefficients
        ``Re(n2 cos theta_t) / (n1 cos theta_i) |t|^2`` [1]; 0 past the
        critical angle.
    transmission_angle : float or ndarray
        Angle of the transmitted wave from the normal [deg]; NaN past the
        critical angle.
    total_internal_reflection : bool or ndarray of bool
        True where ``n1 sin theta_i > n2`` (no transmitted travelling wave).
    """

    r_s: object
    r_p: object
    t_s: object
    t_p: object
    R_s: object
    R_p: object
    T_s: object
    T_p: object
    transmission_angle: object
    total_internal_reflection: object


def _real_array(name, value, expected, ok):
    """``value`` as a float array; ValueError naming ``name`` if ``ok`` fails anywhere."""
    try:
        raw = np.asarray(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be {expected}, got {value!r}") from None
    if raw.dtype.kind not in "iuf":
        raise ValueError(f"{name} must be {expected} (real numbers), got {value!r}")
    arr = raw.astype(float)
    with np.errstate(invalid="ignore"):
        good = np.isfinite(arr) & ok(arr)
    if not np.all(good):
        bad_index = np.argwhere(~good)[0]
        bad = float(arr[tuple(bad_index)])
        where = "" if arr.ndim == 0 else f" (at index {tuple(int(i) for i in bad_index)})"
        raise ValueError(f"{name} must be {expected}, got {bad!r}{where}")
    return arr


def _index(name, value):
    return _real_array(name, value, "a finite refractive index > 0 [1]", lambda a: a > 0.0)


def _scalar_or_array(values, scalar, kind):
    if not scalar:
        return values
    return kind(values[()])


def fresnel(n1, n2, incidence):
    """Fresnel amplitude and power coefficients at a flat boundary.

    Parameters
    ----------
    n1 : float or array_like
        Real refractive index of the incident medium [1], finite and > 0.
    n2 : float or array_like
        Real refractive index of the transmitting medium [1], finite and > 0.
    incidence : float or array_like
        Angle of incidence in medium 1, from the boundary normal [deg],
        ``0 <= incidence < 90``.  The three inputs broadcast against each
        other.

    Returns
    -------
    FresnelCoefficients
        ``r_s, r_p, t_s, t_p`` [1] (complex), ``R_s, R_p, T_s, T_p`` [1],
        ``transmission_angle`` [deg] (NaN past the critical angle) and
        ``total_internal_reflection``; scalars when all inputs are scalars.

    Raises
    ------
    ValueError
        If an index is not finite and > 0, or an incidence is not finite and
        in [0, 90), naming the argument and the offending value.

    Notes
    -----
    Conventions (unit vectors, ``exp(-i omega t)``, the decaying root past the
    critical angle) are stated in the module docstring.  With Snell's law
    ``n1 sin theta_i = n2 sin theta_t`` the amplitude coefficients are the
    Fresnel equations; ``T`` is the ratio of the normal components of the
    transmitted and incident time-averaged Poynting vectors.

    References
    ----------
    Jackson, J. D. (1999). *Classical Electrodynamics*, 3rd ed. Wiley,
    New York, section 7.3, pp. 302-306 (Fresnel equations), section 7.4,
    pp. 306-309 (total internal reflection).

    Hecht, E. (2002). *Optics*, 4th ed. Addison-Wesley, San Francisco,
    chapter 4, sections 4.6-4.7, pp. 111-127.
    """
    n1_arr = _index("n1", n1)
    n2_arr = _index("n2", n2)
    inc_arr = _real_array("incidence", incidence, "an angle in [0, 90) [deg]",
                          lambda a: (a >= 0.0) & (a < 90.0))
    scalar = n1_arr.ndim == 0 and n2_arr.ndim == 0 and inc_arr.ndim == 0
    n1_b, n2_b, inc_b = np.broadcast_arrays(n1_arr, n2_arr, inc_arr)

    theta_i = np.radians(inc_b)
    cos_i = np.cos(theta_i)
    sin_t = n1_b * np.sin(theta_i) / n2_b
    n1_cos_i = n1_b * cos_i
    # cos^2(theta_t) = 1 - sin^2(theta_t) from Snell's law, written as
    # ((n1 cos_i)^2 + n2^2 - n1^2) / n2^2: no cancellation near grazing incidence
    # (cos_t = cos_i exactly when n1 = n2).
    cos2_t = (n1_cos_i ** 2 + (n2_b - n1_b) * (n2_b + n1_b)) / n2_b ** 2
    tir = cos2_t < 0.0
    # Below the critical angle cos(theta_t) is real and >= 0; past it, +i*sqrt(...)
    # so that exp(i n2 k0 cos(theta_t) z) decays into medium 2.
    cos_t = np.where(tir, 1j * np.sqrt(np.maximum(-cos2_t, 0.0)),
                     np.sqrt(np.maximum(cos2_t, 0.0)) + 0j)

    n2_cos_i = n2_b * cos_i
    s_den = n1_cos_i + n2_b * cos_t
    p_den = n2_cos_i + n1_b * cos_t
    r_s = (n1_cos_i - n2_b * cos_t) / s_den
    r_p = (n2_cos_i - n1_b * cos_t) / p_den
    t_s = 2.0 * n1_cos_i / s_den
    t_p = 2.0 * n1_cos_i / p_den

    flux_ratio = (n2_b * cos_t.real) / n1_cos_i
    R_s = np.abs(r_s) ** 2
    R_p = np.abs(r_p) ** 2
    T_s = flux_ratio * np.abs(t_s) ** 2
    T_p = flux_ratio * np.abs(t_p) ** 2
    angle_t = np.where(tir, np.nan, np.degrees(np.arctan2(np.where(tir, 0.0, sin_t), cos_t.real)))

    return FresnelCoefficients(
        r_s=_scalar_or_array(r_s, scalar, complex),
        r_p=_scalar_or_array(r_p, scalar, complex),
        t_s=_scalar_or_array(t_s, scalar, complex),
        t_p=_scalar_or_array(t_p, scalar, complex),
        R_s=_scalar_or_array(R_s, scalar, float),
        R_p=_scalar_or_array(R_p, scalar, float),
        T_s=_scalar_or_array(T_s, scalar, float),
        T_p=_scalar_or_array(T_p, scalar, float),
        transmission_angle=_scalar_or_array(angle_t, scalar, float),
        total_internal_reflection=_scalar_or_array(tir, scalar, bool),
    )


def critical_angle(n1, n2):
    """Critical angle of total internal reflection, ``sin theta_c = n2 / n1``.

    Parameters
    ----------
    n1 : float or array_like
        Real refractive index of the incident medium [1], finite and > 0.
    n2 : float or array_like
        Real refractive index of the transmitting medium [1], finite and > 0.
        Broadcasts against ``n1``.

    Returns
    -------
    float or ndarray
        Critical angle in medium 1, from the normal [deg]; NaN where
        ``n1 <= n2`` (no total internal reflection).  Scalar for scalar inputs.

    Raises
    ------
    ValueError
        If an index is not finite and > 0, naming the argument and the value.

    References
    ----------
    Jackson, J. D. (1999). *Classical Electrodynamics*, 3rd ed. Wiley,
    New York, section 7.4, pp. 306-309.

    Hecht, E. (2002). *Optics*, 4th ed. Addison-Wesley, San Francisco,
    section 4.7, pp. 122-127.
    """
    n1_arr = _index("n1", n1)
    n2_arr = _index("n2", n2)
    scalar = n1_arr.ndim == 0 and n2_arr.ndim == 0
    n1_b, n2_b = np.broadcast_arrays(n1_arr, n2_arr)
    exists = n1_b > n2_b
    ratio = np.where(exists, n2_b / n1_b, 0.0)
    out = np.where(exists, np.degrees(np.arcsin(ratio)), np.nan)
    return _scalar_or_array(out, scalar, float)


def brewster_angle(n1, n2):
    """Brewster angle, ``tan theta_B = n2 / n1``, where ``r_p = 0``.

    Parameters
    ----------
    n1 : float or array_like
        Real refractive index of the incident medium [1], finite and > 0.
    n2 : float or array_like
        Real refractive index of the transmitting medium [1], finite and > 0.
        Broadcasts against ``n1``.

    Returns
    -------
    float or ndarray
        Brewster angle in medium 1, from the normal [deg]; always below the
        critical angle when ``n1 > n2``.  Scalar for scalar inputs.

    Raises
    ------
    ValueError
        If an index is not finite and > 0, naming the argument and the value.

    References
    ----------
    Jackson, J. D. (1999). *Classical Electrodynamics*, 3rd ed. Wiley,
    New York, section 7.4, pp. 306-307.

    Hecht, E. (2002). *Optics*, 4th ed. Addison-Wesley, San Francisco,
    section 4.6, pp. 118-119.
    """
    n1_arr = _index("n1", n1)
    n2_arr = _index("n2", n2)
    scalar = n1_arr.ndim == 0 and n2_arr.ndim == 0
    out = np.degrees(np.arctan2(n2_arr, n1_arr))
    return _scalar_or_array(out, scalar, float)

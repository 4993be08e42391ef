"""The signal budget of a ray: absorption, spreading, Fresnel factors, path loss.

For a ray from a point source to a receiver and frequencies f (``docs/theory.md``
section 8), with the equivalent spreading distance R_eq of the ray, the field
absorption exponent A(f) = ∫ ds/L and the Fresnel factor of its surface
interaction (a bounce ``r`` or a crossing ``t``; 1 for rays that stay below
the surface):

    power flux at the receiver  = flux at 1 m · (1 m / R_eq)^2 · F_pow · exp(-2 A)
    path loss [dB]              = 20 log10(R_eq / 1 m) + 8.686 A(f) - 10 log10(F_pow)
    field transfer factor       = sqrt(n_source / n_receiver) · (1 m / R_eq) · exp(-A) · F_amp

where F_pow is R (bounce) or T (crossing) for the polarisation and F_amp is r,
or sqrt(T) times the phase of t: the complex ratio of the receiver field to
the source field at 1 m.  dB numbers here are power (flux) ratios, which are
the same dB numbers as the field ratios (20 log10 of amplitudes) except for
the impedance factor sqrt(n_source / n_receiver), which appears only in the
field factor.

A ray that meets the surface m times from below (a surface duct of a
non-monotone profile) takes the Fresnel factor m times (r^m, R^m).

Near a caustic (where neighbouring rays from the source cross, dX/dtheta_0 =
0) geometrical optics fails: the focusing grows without bound.  The budget
caps the focusing at ``focusing_cap`` and reports, for every ray, the
relative spreading derivative

    spreading_derivative = |dX/dtheta_0| / X          [1/rad]

(from the ray's spreading distance, ``docs/theory.md`` 7.1); it is at least 2
for a straight ray in uniform ice and 0 at a caustic.  ``near_caustic`` is
set where the cap was hit or the derivative is below ``caustic_derivative``.
In a duct the focusing of a ray stays finite (the tube spreads in one
direction only), so the derivative flags caustics of ducted rays that the
cap alone may not reach.

Polarisation basis: rays stay in the vertical plane through source and
receiver; ``s`` is the horizontal unit vector perpendicular to it
(ẑ × ê, ê the horizontal direction from source to receiver) and
``p = k̂ × s`` at each end (k̂ the propagation direction), so a field at the
source projects as E·s and E·p.
"""

import math
import warnings

import numpy as np

from firnray.errors import FirnrayWarning
from firnray.signal.absorption import absorption_exponent
from firnray.signal.fresnel import fresnel

#: dB per field e-fold: 20 log10(e).
DB_PER_NEPER = 20.0 / math.log(10.0)
#: Default cap on the amplitude focusing factor near a caustic [1].
FOCUSING_CAP = 10.0
#: Default relative spreading derivative |dX/dtheta_0| / X [1/rad] below which a ray
#: counts as near a caustic (a straight ray in uniform ice has at least 2).
CAUSTIC_DERIVATIVE = 0.05


class _FixedReflection:
    """A reflector's fixed amplitude coefficient, shaped like Fresnel coefficients."""

    def __init__(self, amplitude):
        self.r_s = self.r_p = complex(amplitude)
        self.R_s = self.R_p = abs(amplitude) ** 2
        self.total_internal_reflection = False


def surface_interaction(ray):
    """Fresnel coefficients of the ray's contact with the surface, or None.

    Returns
    -------
    (FresnelCoefficients, str) or None
        The coefficients and "reflection", "transmission" or "layer
        reflection"; None for rays that meet no interface.
    """
    prof = ray._profile
    n_s = prof.n_surface
    n_air = prof.n_air
    zs, zr = float(ray.source[2]), float(ray.receiver[2])
    b = ray.invariant
    if ray.kind == "reflected":
        if zs > 0.0 and zr > 0.0:        # from the air, off the snow
            n1, n2 = n_air, n_s
        else:                             # from below, off the air
            n1, n2 = n_s, n_air
        inc = math.degrees(math.asin(min(b / n1, 1.0)))
        return fresnel(n1, n2, min(inc, 89.999999)), "reflection"
    if ray.kind == "layer-reflected":
        layer = ray.reflector
        if layer.amplitude is not None:
            return _FixedReflection(layer.amplitude), "layer reflection"
        n1 = float(prof.index(layer.z))
        inc = math.degrees(math.asin(min(b / n1, 1.0)))
        return fresnel(n1, layer.n_below, min(inc, 89.999999)), "layer reflection"
    if ray.kind == "transmitted":
        n1, n2 = (n_air, n_s) if zs > 0.0 else (n_s, n_air)
        inc = math.degrees(math.asin(min(b / n1, 1.0)))
        return fresnel(n1, n2, min(inc, 89.999999)), "transmission"
    return None


def polarisation_basis(ray):
    """Unit vectors s, p at the source and the receiver, in the caller's frame.

    Returns
    -------
    dict
        ``s`` (3,), ``p_launch`` (3,), ``p_arrival`` (3,) [1].
    """
    d = ray.receiver[:2] - ray.source[:2]
    dist = math.hypot(d[0], d[1])
    e = np.array([1.0, 0.0]) if dist == 0.0 else d / dist
    s = np.array([-e[1], e[0], 0.0])
    return {"s": s, "p_launch": np.cross(ray.launch_direction, s),
            "p_arrival": np.cross(ray.arrival_direction, s)}


class SignalBudget:
    """Signal budget of one ray at several frequencies.

    Attributes
    ----------
    frequencies : ndarray, shape (F,)
        [MHz].
    absorption : ndarray, shape (F,)
        Field absorption exponent A = ∫ ds/L [1].
    attenuation_db : ndarray, shape (F,)
        Absorption loss, 8.686 A [dB].
    equivalent_distance : float
        Spreading distance used [m] (capped near a caustic).
    spreading_db : float
        20 log10(R_eq / 1 m) [dB], the spreading loss relative to 1 m.
    focusing : float
        Amplitude focusing relative to straight-line 1/R [1] (after the cap).
    focusing_capped : bool
        True if the ray's focusing exceeded ``focusing_cap`` (or its
        spreading distance is unknown) and was capped.
    spreading_derivative : float
        Relative spreading derivative ``|dX/dtheta_0| / X`` [1/rad] of the ray
        (X the horizontal distance, theta_0 the launch zenith): at least 2
        for a straight ray in uniform ice, 0 at a caustic; NaN for a
        vertical ray or an unknown spreading distance, inf for a ray that
        arrives horizontally.
    near_caustic : bool
        True if the focusing was capped or ``spreading_derivative`` is below
        ``caustic_derivative``: geometrical optics, and so this budget, is
        unreliable there.
    fresnel_db_s, fresnel_db_p : float
        -10 log10 of the power Fresnel factor [dB] (0 without surface contact).
    total_db_s, total_db_p : ndarray, shape (F,)
        Path loss [dB] per polarisation.
    field_factor_s, field_factor_p : ndarray of complex, shape (F,)
        Receiver field over source field at 1 m, per polarisation [1].
    interaction : str
        "none", "reflection", "transmission" or "layer reflection".
    interactions : int
        Number of surface or layer contacts, each taking the Fresnel factor
        [1] (several for a ray reflected repeatedly in a surface duct).
    total_internal_reflection : bool
    """

    def __init__(self, **kw):
        self.__dict__.update(kw)

    def rows(self):
        """Readable rows (frequency, attenuation, spreading, Fresnel s/p, total s/p) [MHz, dB]."""
        return [(float(f), float(a), float(self.spreading_db), float(self.fresnel_db_s),
                 float(self.fresnel_db_p), float(ts), float(tp))
                for f, a, ts, tp in zip(self.frequencies, self.attenuation_db,
                                        self.total_db_s, self.total_db_p)]


def spreading_derivative(ray):
    """Relative spreading derivative ``|dX/dtheta_0| / X`` of a ray [1/rad].

    From the spreading distance (``docs/theory.md`` 7.1),
    ``R_eq^2 = X |dX/dtheta_0| |cos theta_r| / sin theta_0``, so
    ``|dX/dtheta_0| / X = R_eq^2 sin theta_0 / (X^2 |cos theta_r|)``.

    Parameters
    ----------
    ray : Ray

    Returns
    -------
    float
        [1/rad]; NaN for a vertical ray (X = 0) or an unknown spreading
        distance, inf for a horizontal arrival.
    """
    x = float(np.hypot(*(ray.receiver[:2] - ray.source[:2])))
    r_eq = ray.equivalent_distance
    if not (x > 0.0 and np.isfinite(r_eq) and r_eq > 0.0):
        return math.nan
    cos_r = abs(math.cos(math.radians(ray.arrival_zenith)))
    top = r_eq * r_eq * math.sin(math.radians(ray.launch_zenith))
    return top / (x * x * cos_r) if cos_r > 0.0 else math.inf


def signal_budget(ray, frequencies, attenuation, focusing_cap=FOCUSING_CAP, nodes=64,
                  caustic_derivative=CAUSTIC_DERIVATIVE):
    """Path loss and field transfer of ``ray`` at ``frequencies``.

    Rays of every kind, ducted ones included: the absorption follows the
    ray's legs through the duct (``firnray.signal.absorption``) and a ray
    reflected m times at the surface takes the Fresnel factor m times.

    Parameters
    ----------
    ray : Ray
    frequencies : float or array_like
        [MHz].
    attenuation : attenuation model, callable ``L(z, f)`` or float
        Field attenuation length [m] (see ``firnray.signal.absorption``).
    focusing_cap : float, optional
        Largest amplitude focusing accepted [1]; stronger focusing (near a
        caustic, where geometrical optics fails) is capped and flagged.
    nodes : int, optional
        Quadrature nodes per monotone piece (rays in monotone profiles).
    caustic_derivative : float, optional
        A ray whose relative spreading derivative ``|dX/dtheta_0| / X`` is
        below this [1/rad] is flagged ``near_caustic`` (default 0.05, 40
        times below the least value of a straight ray in uniform ice).

    Returns
    -------
    SignalBudget
        With ``near_caustic``, ``focusing_capped`` and
        ``spreading_derivative`` telling whether the ray is near a caustic.
    """
    f = np.atleast_1d(np.asarray(frequencies, dtype=float))
    absorb = np.atleast_1d(absorption_exponent(ray, attenuation, f, nodes=nodes))
    straight = ray.straight_distance
    r_eq = ray.equivalent_distance
    capped = False
    if not (np.isfinite(r_eq) and r_eq > 0) or straight / r_eq > focusing_cap:
        r_eq = straight / focusing_cap
        capped = True
    derivative = spreading_derivative(ray)
    near = capped or bool(derivative < caustic_derivative)
    contacts = 1
    prof = ray._profile
    n_src = prof.index(float(ray.source[2]))     # n_air above the surface
    n_rcv = prof.index(float(ray.receiver[2]))
    contact = surface_interaction(ray)
    if contact is None:
        amp_s = amp_p = 1.0 + 0j
        pow_s = pow_p = 1.0
        interaction, tir = "none", False
    else:
        coeff, interaction = contact
        if interaction in ("reflection", "layer reflection"):
            if interaction == "reflection":
                contacts = max(1, int(ray.surface_reflections))
            amp_s, amp_p = complex(coeff.r_s) ** contacts, complex(coeff.r_p) ** contacts
            pow_s, pow_p = float(coeff.R_s) ** contacts, float(coeff.R_p) ** contacts
        else:
            amp_s = math.sqrt(float(coeff.T_s)) * np.exp(1j * np.angle(coeff.t_s))
            amp_p = math.sqrt(float(coeff.T_p)) * np.exp(1j * np.angle(coeff.t_p))
            pow_s, pow_p = float(coeff.T_s), float(coeff.T_p)
        tir = bool(np.any(coeff.total_internal_reflection))
    with np.errstate(divide="ignore"):
        fr_s = -10.0 * math.log10(pow_s) + 0.0 if pow_s > 0 else math.inf
        fr_p = -10.0 * math.log10(pow_p) + 0.0 if pow_p > 0 else math.inf
    att_db = DB_PER_NEPER * absorb
    spread_db = 20.0 * math.log10(r_eq)
    common = math.sqrt(n_src / n_rcv) / r_eq * np.exp(-absorb)
    if capped:
        warnings.warn(f"{ray.kind} ray focusing capped at {focusing_cap} near a caustic",
                      FirnrayWarning, stacklevel=2)
    elif near:
        warnings.warn(f"{ray.kind} ray near a caustic (spreading derivative "
                      f"{derivative:.3g}/rad below {caustic_derivative}/rad): geometrical "
                      f"optics is unreliable there", FirnrayWarning, stacklevel=2)
    return SignalBudget(frequencies=f, absorption=absorb, attenuation_db=att_db,
                        equivalent_distance=r_eq, spreading_db=spread_db,
                        focusing=straight / r_eq, near_caustic=near, focusing_capped=capped,
                        spreading_derivative=derivative, interactions=0 if contact is None
                        else contacts,
                        fresnel_db_s=fr_s, fresnel_db_p=fr_p,
                        total_db_s=att_db + spread_db + fr_s, total_db_p=att_db + spread_db + fr_p,
                        field_factor_s=common * amp_s, field_factor_p=common * amp_p,
                        interaction=interaction, total_internal_reflection=tir, kind=ray.kind)


def signal_budget_many(rayset, frequencies, attenuation, focusing_cap=FOCUSING_CAP, nodes=64,
                       caustic_derivative=CAUSTIC_DERIVATIVE):
    """:func:`signal_budget` for every ray of a ``RaySet``.

    Returns
    -------
    dict of ndarray
        ``attenuation_db``, ``total_db_s``, ``total_db_p`` (N, K, F) [dB];
        ``spreading_db``, ``fresnel_db_s``, ``fresnel_db_p`` [dB], ``focusing``
        [1], ``spreading_derivative`` [1/rad] (N, K); ``near_caustic``,
        ``focusing_capped`` (N, K) bool; ``field_factor_s``, ``field_factor_p``
        (N, K, F) complex [1].  NaN (False) where there is no ray.
    """
    f = np.atleast_1d(np.asarray(frequencies, dtype=float))
    n, k = rayset.travel_time.shape
    nanf = np.full((n, k, len(f)), np.nan)
    out = {"attenuation_db": nanf.copy(), "total_db_s": nanf.copy(), "total_db_p": nanf.copy(),
           "field_factor_s": nanf.astype(complex), "field_factor_p": nanf.astype(complex),
           "spreading_db": np.full((n, k), np.nan), "fresnel_db_s": np.full((n, k), np.nan),
           "fresnel_db_p": np.full((n, k), np.nan), "focusing": np.full((n, k), np.nan),
           "spreading_derivative": np.full((n, k), np.nan),
           "near_caustic": np.zeros((n, k), bool), "focusing_capped": np.zeros((n, k), bool)}
    capped = 0
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FirnrayWarning)
        for i in range(n):
            for j, ray in enumerate(rayset[i]):
                bud = signal_budget(ray, f, attenuation, focusing_cap, nodes,
                                    caustic_derivative)
                for key in ("attenuation_db", "total_db_s", "total_db_p", "field_factor_s",
                            "field_factor_p"):
                    out[key][i, j] = getattr(bud, key)
                for key in ("spreading_db", "fresnel_db_s", "fresnel_db_p", "focusing",
                            "spreading_derivative", "near_caustic", "focusing_capped"):
                    out[key][i, j] = getattr(bud, key)
                capped += bud.near_caustic
    if capped:
        warnings.warn(f"{capped} ray(s) near a caustic (focusing capped at {focusing_cap} or "
                      f"spreading derivative below {caustic_derivative}/rad)",
                      FirnrayWarning, stacklevel=2)
    return out

"""Firn density and the refractive index it implies.

Two kinds of published model live here, one function each:

* density -> index relations for dry firn, a mixture of ice and air:
  ``kovacs_index`` (linear, Kovacs, Gow & Morey 1995) and ``looyenga_index``
  (cube-root permittivity mixing, Looyenga 1965); ``density_to_index``
  selects one by name;
* the steady-state densification model of Herron & Langway (1980):
  ``herron_langway_density`` (density against height) and
  ``herron_langway_critical_depth`` (depth of the 550 kg/m^3 transition).

Two conveniences on top turn densities into an index profile
(``firnray.medium.general_profiles.TabulatedProfile``):
``index_profile_from_density`` for measured or modelled samples and
``herron_langway_profile`` for a Herron & Langway site.

Conventions: densities in kg/m^3 at the interface (the published formulas
use g/cm^3 = Mg/m^3 internally), heights ``z`` in metres with 0 at the snow
surface and negative in the firn (a depth d is the height z = -d),
temperatures in °C, accumulation rates in metres of water equivalent per
year.  Scalar in, scalar out; arrays in, arrays (broadcast) out.
"""

import numpy as np

from firnray.checks import finite_float, positive_float
from firnray.medium.general_profiles import SampleError, TabulatedProfile, table_samples
from firnray.medium.profiles import DEFAULT_Z_MIN
from firnray.medium.smoothing import smooth_samples

#: Density of solid ice [kg m^-3] (value of common practice; the same value
#: as ``firnray.medium.temperature.ICE_DENSITY``).
ICE_DENSITY = 917.0

#: Real relative permittivity of solid ice at radio frequencies [1] (value of
#: common practice; the same as ``firnray.medium.attenuation.ICE_PERMITTIVITY``).
ICE_PERMITTIVITY = 3.15

#: Largest density accepted by the density -> index relations [kg m^-3]: the
#: density of water, a generous bound above solid ice that leaves room for
#: measurement scatter near the ice density.
MAX_DENSITY = 1000.0

#: Coefficient of the linear density-index relation of Kovacs, Gow & Morey
#: (1995) [cm^3 g^-1]: n = 1 + 0.845 rho, rho in g/cm^3 (the commonly quoted
#: value, recalled from memory; not confirmed against the paper's text).
KOVACS_COEFFICIENT = 0.845

#: Gas constant as used by Herron & Langway (1980) [J mol^-1 K^-1].
HL_GAS_CONSTANT = 8.314

#: Critical density between stage 1 and stage 2 of Herron & Langway (1980)
#: [kg m^-3] (0.55 Mg/m^3; stated in the paper's abstract).
HL_CRITICAL_DENSITY = 550.0

#: 0 °C in kelvin (exact by definition).
ZERO_CELSIUS_K = 273.15

#: The density -> index relations known to ``density_to_index``.
RELATIONS = ("kovacs", "looyenga")


# --------------------------------------------------------------------------- helpers

def _array(name, value, what):
    """``value`` as a float array; raise if it cannot be one or holds non-finite values."""
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be {what}, got {value!r}") from None
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must hold finite values ({what}), got {value!r}")
    return arr


def _out(values):
    """Scalar in, scalar out: a 0-d array becomes a float."""
    values = np.asarray(values, dtype=float)
    return float(values) if values.ndim == 0 else values


def _densities(density):
    """Checked densities [kg/m^3] as an array, 0 <= density <= MAX_DENSITY."""
    rho = _array("density", density, "a density or an array of densities [kg/m^3]")
    if np.any(rho < 0.0) or np.any(rho > MAX_DENSITY):
        raise ValueError(f"density must lie in [0, {MAX_DENSITY}] kg/m^3 (air to water; solid "
                         f"ice is {ICE_DENSITY} kg/m^3), got values from "
                         f"{float(np.min(rho))!r} to {float(np.max(rho))!r} kg/m^3")
    return rho


def _heights(z):
    """Checked heights [m] as an array, all <= 0 (in the firn)."""
    arr = _array("z", z, "a height or an array of heights [m]")
    if np.any(arr > 0.0):
        raise ValueError(f"z must be <= 0 m (heights in the firn; 0 is the snow surface, a "
                         f"depth d is z = -d), got a largest value of {float(np.max(arr))!r} m")
    return arr


def _temperatures(temperature):
    """Checked temperatures [°C] as an array: above absolute zero and below 0 °C."""
    t = _array("temperature", temperature, "a temperature or an array of temperatures [°C]")
    if np.any(t <= -ZERO_CELSIUS_K) or np.any(t >= 0.0):
        raise ValueError("temperature must lie between -273.15 °C and 0 °C (the model is for "
                         f"dry, cold firn), got values from {float(np.min(t))!r} to "
                         f"{float(np.max(t))!r} °C")
    return t


def _accumulations(accumulation):
    a = _array("accumulation", accumulation,
               "an accumulation rate or an array of them [m w.e./yr]")
    if np.any(a <= 0.0):
        raise ValueError(f"accumulation must be > 0 m w.e./yr, got a smallest value of "
                         f"{float(np.min(a))!r}")
    return a


def _surface_densities(surface_density, ice_density):
    rho0 = _array("surface_density", surface_density,
                  "a density or an array of densities [kg/m^3]")
    if np.any(rho0 <= 0.0) or np.any(rho0 >= ice_density):
        raise ValueError(f"surface_density must lie strictly between 0 and ice_density "
                         f"({ice_density} kg/m^3), got values from {float(np.min(rho0))!r} to "
                         f"{float(np.max(rho0))!r} kg/m^3")
    return rho0


def _ice_density(ice_density):
    rho_i = positive_float("ice_density", ice_density)
    if rho_i <= HL_CRITICAL_DENSITY or rho_i > MAX_DENSITY:
        raise ValueError(f"ice_density must lie in ({HL_CRITICAL_DENSITY}, {MAX_DENSITY}] "
                         f"kg/m^3, got {ice_density!r}")
    return rho_i


def _logit(rho, rho_i):
    """ln[rho / (rho_i - rho)], the variable in which the model is linear in depth."""
    return np.log(rho / (rho_i - rho))


# --------------------------------------------------------------------------- density -> index

def kovacs_index(density):
    """Refractive index of dry firn from its density, linear relation.

    n = 1 + 0.845 rho, with rho in g/cm^3 (Kovacs, A., Gow, A. J. & Morey,
    R. M. 1995, Cold Regions Science and Technology 23(3), 245-256,
    doi:10.1016/0165-232X(94)00016-Q).

    Parameters
    ----------
    density : float or array_like
        Firn density [kg/m^3], 0 <= density <= 1000.

    Returns
    -------
    float or ndarray
        Refractive index [1], the shape of ``density``; 1.775 at the ice
        density 917 kg/m^3.

    Raises
    ------
    ValueError
        If ``density`` is not finite or lies outside [0, 1000] kg/m^3.

    Notes
    -----
    The coefficient 0.845 is the value commonly quoted for this paper,
    recalled from memory and not confirmed against its text.  The API takes
    kg/m^3 and converts to g/cm^3 (a factor 1e-3).  The relation is
    empirical for dry polar firn; its value at density 0 (n = 1, air) is the
    extrapolation of the straight line, not part of the fit.
    """
    rho = _densities(density)
    return _out(1.0 + KOVACS_COEFFICIENT * 1e-3 * rho)


def looyenga_index(density, ice_permittivity=ICE_PERMITTIVITY, ice_density=ICE_DENSITY):
    """Refractive index of dry firn from the Looyenga mixing formula for ice and air.

    eps^(1/3) = v eps_ice^(1/3) + (1 - v) eps_air^(1/3) with the ice volume
    fraction v = rho / rho_ice and eps_air = 1; n = sqrt(eps)
    (Looyenga, H. 1965, Physica 31(3), 401-406,
    doi:10.1016/0031-8914(65)90045-5).

    Parameters
    ----------
    density : float or array_like
        Firn density [kg/m^3], 0 <= density <= 1000.
    ice_permittivity : float, optional
        Real relative permittivity of solid ice [1], >= 1 (default 3.15).
    ice_density : float, optional
        Density of solid ice [kg/m^3], > 0 (default 917).

    Returns
    -------
    float or ndarray
        Refractive index [1], the shape of ``density``: 1 at density 0 and
        sqrt(ice_permittivity) at ``ice_density``.

    Raises
    ------
    ValueError
        If an argument is not finite or out of its range.

    Notes
    -----
    Looyenga's formula is written for the permittivity of any two-phase
    mixture; its use for firn (ice in air, real parts only, the permittivity
    of air taken as 1) is common practice.  A density above ``ice_density``
    (measurement scatter) extrapolates the formula (v > 1).
    """
    rho = _densities(density)
    eps_ice = finite_float("ice_permittivity", ice_permittivity)
    if eps_ice < 1.0:
        raise ValueError(f"ice_permittivity must be >= 1, got {ice_permittivity!r}")
    rho_i = positive_float("ice_density", ice_density)
    v = rho / rho_i
    cube_root = v * np.cbrt(eps_ice) + (1.0 - v)
    return _out(cube_root ** 1.5)


def density_to_index(density, relation="kovacs", **kw):
    """Refractive index of dry firn from its density by a named relation.

    Parameters
    ----------
    density : float or array_like
        Firn density [kg/m^3].
    relation : {"kovacs", "looyenga"}, optional
        ``"kovacs"``: :func:`kovacs_index` (Kovacs, Gow & Morey 1995, Cold
        Regions Science and Technology 23, 245-256); ``"looyenga"``:
        :func:`looyenga_index` (Looyenga 1965, Physica 31, 401-406).
    **kw
        Keywords of the chosen relation (``ice_permittivity`` and
        ``ice_density`` for ``"looyenga"``; none for ``"kovacs"``).

    Returns
    -------
    float or ndarray
        Refractive index [1], the shape of ``density``.

    Raises
    ------
    ValueError
        For an unknown relation, a keyword the relation does not take, or
        bad input to the relation.
    """
    accepted = {"kovacs": (), "looyenga": ("ice_permittivity", "ice_density")}
    if relation not in accepted:
        raise ValueError(f"relation must be one of {RELATIONS}, got {relation!r}")
    for key in kw:
        if key not in accepted[relation]:
            raise ValueError(f"relation {relation!r} takes no keyword {key!r} (it takes "
                             f"{accepted[relation] or 'none'})")
    if relation == "kovacs":
        return kovacs_index(density)
    return looyenga_index(density, **kw)


# --------------------------------------------------------------------------- densification

def herron_langway_rate_constants(temperature):
    """Arrhenius rate constants k0, k1 of the Herron & Langway (1980) model.

    k0 = 11 exp(-10160 / (R T)) and k1 = 575 exp(-21400 / (R T)) with
    R = 8.314 J/(mol K) and T the mean annual firn temperature in kelvin
    (Herron, M. M. & Langway, C. C. Jr 1980, Journal of Glaciology 25(93),
    373-385, doi:10.3189/S0022143000015239).

    Parameters
    ----------
    temperature : float or array_like
        Mean annual firn temperature [°C], between -273.15 and 0.

    Returns
    -------
    (k0, k1) : tuple of float or ndarray
        k0 [m^2/Mg], such that k0 rho_i h is dimensionless with rho_i in
        Mg/m^3 and the depth h in m; k1 [m^2 Mg^-1 (m/yr)^(1/2)], such that
        k1 rho_i h / sqrt(A) is dimensionless with A in m w.e./yr.

    Notes
    -----
    The constants are quoted from memory (in the form widely reused since
    the paper); only the paper's abstract could be read here.
    """
    t_k = _temperatures(temperature) + ZERO_CELSIUS_K
    k0 = 11.0 * np.exp(-10160.0 / (HL_GAS_CONSTANT * t_k))
    k1 = 575.0 * np.exp(-21400.0 / (HL_GAS_CONSTANT * t_k))
    return _out(k0), _out(k1)


def herron_langway_critical_depth(temperature, surface_density, ice_density=ICE_DENSITY):
    """Depth of the 550 kg/m^3 transition of the Herron & Langway (1980) model.

    h_0.55 = [ln(0.55 / (rho_i - 0.55)) - ln(rho_0 / (rho_i - rho_0))] / (rho_i k0),
    densities in Mg/m^3, k0 = 11 exp(-10160 / (R T)) (Herron, M. M. &
    Langway, C. C. Jr 1980, Journal of Glaciology 25(93), 373-385,
    doi:10.3189/S0022143000015239).

    Parameters
    ----------
    temperature : float or array_like
        Mean annual firn temperature [°C], between -273.15 and 0.
    surface_density : float or array_like
        Snow density at the surface [kg/m^3], 0 < surface_density < ice_density.
    ice_density : float, optional
        Density of solid ice [kg/m^3] (default 917), in (550, 1000].

    Returns
    -------
    float or ndarray
        The DEPTH of the transition [m], >= 0, positive down (its height is
        minus this number); 0 when ``surface_density`` >= 550 kg/m^3.

    Raises
    ------
    ValueError
        If an argument is not finite or out of range.

    Notes
    -----
    The accumulation rate does not enter: in stage 1 the densification rate
    in time is proportional to the accumulation, so it cancels in the
    depth-density relation (stated in the paper's abstract).  A surface
    density at or above 550 kg/m^3 (no stage 1) gives 0; the paper assumes a
    lighter surface.  Formula quoted from memory (see
    :func:`herron_langway_rate_constants`).
    """
    rho_i_kg = _ice_density(ice_density)
    t = _temperatures(temperature)
    rho0_kg = _surface_densities(surface_density, rho_i_kg)
    t, rho0_kg = np.broadcast_arrays(t, rho0_kg)
    k0, _ = herron_langway_rate_constants(t)
    rho_i, rho0, rho_c = rho_i_kg * 1e-3, rho0_kg * 1e-3, HL_CRITICAL_DENSITY * 1e-3
    h = (_logit(rho_c, rho_i) - _logit(rho0, rho_i)) / (rho_i * np.asarray(k0))
    return _out(np.maximum(h, 0.0))


def herron_langway_density(z, temperature, accumulation, surface_density,
                           ice_density=ICE_DENSITY):
    """Steady-state firn density against height, Herron & Langway (1980).

    Herron, M. M. & Langway, C. C. Jr 1980, Journal of Glaciology 25(93),
    373-385, doi:10.3189/S0022143000015239.  With the depth h = -z [m],
    densities in Mg/m^3 and A in m w.e./yr:

    stage 1 (rho < 0.55):
        ln[rho / (rho_i - rho)] = rho_i k0 h + ln[rho_0 / (rho_i - rho_0)]
    stage 2 (rho >= 0.55, below the critical depth h_0.55):
        ln[rho / (rho_i - rho)] = rho_i k1 (h - h_0.55) / sqrt(A)
                                  + ln[0.55 / (rho_i - 0.55)]

    which integrate the rate equations d rho / dt = k0 A (rho_i - rho) and
    d rho / dt = k1 sqrt(A) (rho_i - rho) of a firn parcel sinking at
    dh/dt = A rho_w / rho (rate constants in
    :func:`herron_langway_rate_constants`).

    Parameters
    ----------
    z : float or array_like
        HEIGHT [m], <= 0 (0 at the snow surface, negative in the firn: the
        depth d is z = -d).
    temperature : float or array_like
        Mean annual firn temperature [°C], between -273.15 and 0.
    accumulation : float or array_like
        Mean annual accumulation rate [m w.e./yr], > 0.
    surface_density : float or array_like
        Snow density at the surface [kg/m^3], 0 < surface_density < ice_density.
    ice_density : float, optional
        Density of solid ice [kg/m^3] (default 917), in (550, 1000].

    Returns
    -------
    float or ndarray
        Density [kg/m^3], the broadcast shape of the array arguments;
        ``surface_density`` at z = 0, rising towards ``ice_density`` with depth.

    Raises
    ------
    ValueError
        If an argument is not finite or out of range (z > 0 included).

    Notes
    -----
    The paper gives stage 2 up to about 0.8 Mg/m^3 (pore close-off); here it
    is continued below close-off, approaching the ice density, which is the
    usual way the model is used for a whole firn column.  A surface density
    at or above 550 kg/m^3 starts stage 2 at the surface from that density
    (an extension; the paper assumes a lighter surface).  The formulas are
    quoted from memory in the form widely reused since the paper; only the
    paper's abstract (stage rates proportional to A and sqrt(A) times
    (rho_i - rho), break at 0.55 Mg/m^3) could be read here.
    """
    rho_i_kg = _ice_density(ice_density)
    h = -_heights(z)
    t = _temperatures(temperature)
    a = _accumulations(accumulation)
    rho0_kg = _surface_densities(surface_density, rho_i_kg)
    h, t, a, rho0_kg = np.broadcast_arrays(h, t, a, rho0_kg)
    k0, k1 = (np.asarray(k) for k in herron_langway_rate_constants(t))
    rho_i, rho0 = rho_i_kg * 1e-3, rho0_kg * 1e-3
    rho_c = np.maximum(rho0, HL_CRITICAL_DENSITY * 1e-3)   # stage-2 start density
    h_c = np.asarray(herron_langway_critical_depth(t, rho0_kg, rho_i_kg))
    x1 = rho_i * k0 * h + _logit(rho0, rho_i)
    x2 = rho_i * k1 * (h - h_c) / np.sqrt(a) + _logit(rho_c, rho_i)
    x = np.where(h < h_c, x1, x2)
    with np.errstate(over="ignore"):
        rho = rho_i / (1.0 + np.exp(-x))
    return _out(rho * 1e3)


# --------------------------------------------------------------------------- profiles

def index_profile_from_density(z, density, relation="kovacs", info=None, n_air=1.0,
                               z_min=DEFAULT_Z_MIN, extend_to_surface=False,
                               smoothing_window=None, **kw):
    """Tabulated index profile from density samples, inversions included.

    Parameters
    ----------
    z : array_like
        Heights of the samples [m], 1-D, <= 0 (0 at the surface, a depth d is
        z = -d), in any order (sorted by height internally, surface first);
        rows repeated exactly are dropped.
    density : array_like
        Firn density at ``z`` [kg/m^3], the shape of ``z``, finite, in
        [0, 1000].  It may fall with depth (density inversions) or repeat one
        value (deep ice): the index follows it.
    relation : {"kovacs", "looyenga"}, optional
        The density -> index relation (:func:`density_to_index`).
    info : dict, optional
        Name, description and citation for the profile.
    n_air : float, optional
        Index above the surface [1] (default 1.0).
    z_min : float, optional
        Lowest valid height of the profile [m] (default -5000 m).
    extend_to_surface : bool, optional
        Hold the shallowest value constant up to z = 0 when the shallowest
        sample lies below the surface (default False: such a table is refused).
    smoothing_window : float or None, optional
        Full width [m] of a running mean applied to the DENSITY samples
        before the relation (:func:`firnray.medium.smoothing.smooth_samples`),
        or None (default) for none; recorded in ``info["smoothing"]``.
    **kw
        Keywords of the relation (``ice_permittivity``, ``ice_density``).

    Returns
    -------
    firnray.medium.general_profiles.TabulatedProfile
        The profile through the samples (z, n(density)).

    Raises
    ------
    ValueError
        For mismatched shapes, fewer than 2 distinct heights, NaN or inf,
        heights above the surface, one height with two densities, a
        shallowest sample below the surface without ``extend_to_surface``, a
        density outside [0, 1000] kg/m^3 or giving an index below ``n_air``,
        or an unknown relation; the message names the argument, the row (in
        the caller's order) and the value.
    """
    n_air = finite_float("n_air", n_air)
    z_min = finite_float("z_min", z_min)
    zs, rho_s, rows = table_samples(z, density, "density", " kg/m^3", z_min,
                                    bool(extend_to_surface))
    out = np.flatnonzero((rho_s < 0.0) | (rho_s > MAX_DENSITY))
    if out.size:
        i = int(out[0])
        raise SampleError(f"density[{rows[i]}] = {float(rho_s[i])!r} kg/m^3 at z = "
                          f"{float(zs[i])!r} m is outside [0, {MAX_DENSITY}] kg/m^3 (air to "
                          f"water; solid ice is {ICE_DENSITY} kg/m^3)", "density", [rows[i]],
                          "out_of_range")
    n = np.asarray(density_to_index(rho_s, relation, **kw), dtype=float)
    low = np.flatnonzero(n < n_air)
    if low.size:
        i = int(low[0])
        raise SampleError(f"density[{rows[i]}] = {float(rho_s[i])!r} kg/m^3 at z = "
                          f"{float(zs[i])!r} m gives n = {float(n[i])!r}, below n_air "
                          f"({n_air}); expected n >= n_air", "density", [rows[i]],
                          "out_of_range")
    info = dict(info or {})
    info.setdefault("density_relation", relation)
    if smoothing_window is not None:
        window = positive_float("smoothing_window", smoothing_window)
        # a running mean stays within the range of the samples: still in [0, MAX_DENSITY]
        # and, the relations rising with density, still n >= n_air
        n = np.asarray(density_to_index(smooth_samples(zs, rho_s, window), relation, **kw),
                       dtype=float)
        info["smoothing"] = {"window_m": window, "quantity": "density",
                             "method": "running mean of the linearly joined samples"}
    return TabulatedProfile(zs, n, n_air=n_air, z_min=z_min, info=info,
                            extend_to_surface=extend_to_surface)


def herron_langway_profile(temperature, accumulation, surface_density, z_bottom=-200.0,
                           spacing=0.5, relation="kovacs", ice_density=ICE_DENSITY, n_air=1.0,
                           z_min=DEFAULT_Z_MIN, info=None, **kw):
    """Tabulated index profile of a Herron & Langway (1980) firn column.

    Samples :func:`herron_langway_density` every ``spacing`` metres from the
    surface down to ``z_bottom`` and converts it with ``relation``.

    Parameters
    ----------
    temperature : float
        Mean annual firn temperature [°C], between -273.15 and 0.
    accumulation : float
        Mean annual accumulation rate [m w.e./yr], > 0.
    surface_density : float
        Snow density at the surface [kg/m^3].
    z_bottom : float, optional
        Height of the deepest sample [m], < 0 (default -200 m); included even
        when it is not a multiple of ``spacing``.
    spacing : float, optional
        Vertical distance between samples [m], > 0 (default 0.5 m).
    relation : {"kovacs", "looyenga"}, optional
        The density -> index relation (:func:`density_to_index`).
    ice_density : float, optional
        Density of solid ice [kg/m^3] (default 917): used by the
        densification model and, for ``"looyenga"``, also by the mixing
        formula (unless ``**kw`` gives the mixing formula its own).
    n_air : float, optional
        Index above the surface [1] (default 1.0).
    z_min : float, optional
        Lowest valid height of the profile [m] (default -5000 m).
    info : dict, optional
        Name, description and citation (the model and its parameters are added).
    **kw
        Further keywords of the relation (``ice_permittivity``).

    Returns
    -------
    firnray.medium.general_profiles.TabulatedProfile
        Heights 0, -spacing, ..., z_bottom and the index there; ``info``
        records the model and its parameters.  Where the density has reached
        the ice density to double precision the index simply stays constant.

    Raises
    ------
    ValueError
        For bad site parameters, ``z_bottom`` >= 0 or below ``z_min``, or
        ``spacing`` <= 0.
    """
    temperature = finite_float("temperature", temperature)
    accumulation = finite_float("accumulation", accumulation)
    surface_density = finite_float("surface_density", surface_density)
    z_bottom = finite_float("z_bottom", z_bottom)
    if not z_bottom < 0.0:
        raise ValueError(f"z_bottom must be below the surface (< 0 m), got {z_bottom!r}")
    if z_bottom < finite_float("z_min", z_min):
        raise ValueError(f"z_bottom must be >= z_min ({z_min} m), got {z_bottom!r}")
    spacing = positive_float("spacing", spacing)
    count = int(np.floor(-z_bottom / spacing + 1e-9))
    z = -spacing * np.arange(count + 1)
    if z[-1] - z_bottom > 1e-9 * spacing:
        z = np.append(z, z_bottom)
    else:
        z[-1] = z_bottom
    rho = herron_langway_density(z, temperature, accumulation, surface_density, ice_density)
    if relation == "looyenga":
        kw.setdefault("ice_density", ice_density)
    n = np.asarray(density_to_index(rho, relation, **kw), dtype=float)
    model = {"name": "herron-langway",
            "description": (f"Herron & Langway (1980) firn at {temperature} °C, "
                            f"{accumulation} m w.e./yr, surface density {surface_density} "
                            f"kg/m^3; index by the {relation} relation"),
            "citation": ("Herron, M. M. & Langway, C. C. Jr (1980), Journal of Glaciology "
                         "25(93), 373-385, doi:10.3189/S0022143000015239"),
            "density_relation": relation}
    model.update(info or {})
    return TabulatedProfile(z, n, n_air=n_air, z_min=z_min, info=model)

"""Ice temperature profiles T(z) [°C].

Heights ``z`` are in metres: 0 at the snow surface, negative in the ice (a
depth d is the height z = -d).  Every profile is a function of ``z`` and a
small class whose ``temperature(z)`` method evaluates it; the classes are
what ``firnray.medium.attenuation.ArrheniusAttenuation`` takes.

Temperatures are in degrees Celsius at the interface; kelvin are used only
inside the models that need an absolute temperature.  Scalar in, scalar out;
arrays in, arrays of the same shape out.  Profiles describe the ice: a height
above the surface (z > 0) raises ``ValueError``.

Models
------
``tabulated_temperature`` / ``TabulatedTemperature``
    Linear interpolation of measured or modelled samples.
``linear_temperature`` / ``LinearTemperature``
    Constant gradient with depth.
``robin_temperature`` / ``RobinTemperature``
    Steady-state vertical advection-diffusion (Robin 1955).
``cold_plateau_cubic_temperature`` / ``ColdPlateauCubicTemperature``
    A cubic fit to the deep borehole temperatures of a cold high-plateau site.
"""

import math

import numpy as np

from firnray.checks import finite_float, positive_float

#: Seconds in one Julian year (365.25 d) [s]; the year used to turn
#: accumulation rates per year into SI rates (a convention of common practice).
SECONDS_PER_YEAR = 365.25 * 86400.0

#: Thermal conductivity of ice near 0 °C [W m^-1 K^-1]; the usual round value
#: (Cuffey & Paterson 2010, ch. 9; value of common practice, recalled from
#: memory, not confirmed against the book).
ICE_CONDUCTIVITY = 2.1

#: Density of solid ice [kg m^-3] (value of common practice).
ICE_DENSITY = 917.0

#: Specific heat capacity of ice near 0 °C [J kg^-1 K^-1] (Cuffey & Paterson
#: 2010, Table 9.1; recalled from memory, not confirmed against the book).
ICE_HEAT_CAPACITY = 2097.0


# --------------------------------------------------------------------------- helpers

def _heights(z, name="z"):
    """``z`` as a float array (and whether it was a scalar); raise if non-finite or > 0."""
    try:
        arr = np.asarray(z, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a height or an array of heights [m], "
                         f"got {z!r}") from None
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must hold finite heights [m], got {z!r}")
    if np.any(arr > 0.0):
        raise ValueError(f"{name} must be <= 0 m (heights in the ice; 0 is the snow "
                         f"surface), got a largest value of {float(np.max(arr))!r} m")
    return arr


def _out(values):
    """Scalar in, scalar out: a 0-d array becomes a float."""
    values = np.asarray(values, dtype=float)
    return float(values) if values.ndim == 0 else values


class TemperatureProfile:
    """Base of the temperature profiles: ``temperature(z)`` [°C] at height z [m].

    Subclasses implement ``_temperature(z)`` for a checked float array of
    heights z <= 0 [m].
    """

    #: Lowest height where the profile is defined [m] (-inf: no limit).
    z_min = -math.inf

    def temperature(self, z):
        """Ice temperature [°C] at height ``z`` [m] (scalar or array, z <= 0).

        Raises
        ------
        ValueError
            If ``z`` is not finite, lies above the surface (z > 0) or below
            ``z_min``.
        """
        arr = _heights(z)
        if np.any(arr < self.z_min):
            raise ValueError(f"z must be >= {self.z_min} m for {type(self).__name__}, got a "
                             f"smallest value of {float(np.min(arr))!r} m")
        return _out(self._temperature(arr))

    def _temperature(self, z):
        raise NotImplementedError

    def __call__(self, z):
        """Same as ``temperature(z)``."""
        return self.temperature(z)


# --------------------------------------------------------------------------- tabulated

def _check_table(z, temperature_c):
    try:
        zs = np.asarray(z, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"z must be an array of heights [m], got {z!r}") from None
    try:
        ts = np.asarray(temperature_c, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"temperature_c must be an array of temperatures [°C], "
                         f"got {temperature_c!r}") from None
    if zs.ndim != 1 or zs.size < 2:
        raise ValueError(f"z must be a 1-D array of at least 2 heights [m], got shape "
                         f"{zs.shape}")
    if ts.shape != zs.shape:
        raise ValueError(f"temperature_c must have the shape of z {zs.shape}, got shape "
                         f"{ts.shape}")
    if not np.all(np.isfinite(zs)):
        raise ValueError(f"z must hold finite heights [m], got {z!r}")
    if not np.all(np.isfinite(ts)):
        raise ValueError(f"temperature_c must hold finite temperatures [°C] (no NaN), "
                         f"got {temperature_c!r}")
    if np.any(zs > 0.0):
        raise ValueError(f"z must hold heights <= 0 m (in the ice), got a largest value of "
                         f"{float(np.max(zs))!r} m")
    steps = np.diff(zs)
    if np.all(steps < 0):
        zs, ts = zs[::-1], ts[::-1]
    elif not np.all(steps > 0):
        raise ValueError("z must be strictly monotone (all increasing or all decreasing, no "
                         f"repeated heights), got {z!r}")
    if np.any(ts < -273.15):
        raise ValueError(f"temperature_c must be above absolute zero (-273.15 °C), got a "
                         f"smallest value of {float(np.min(ts))!r} °C")
    return zs, ts


def tabulated_temperature(z, z_samples, temperature_samples_c, outside="raise"):
    """Temperature by linear interpolation of tabulated samples.

    Parameters
    ----------
    z : float or array_like
        Heights where the temperature is wanted [m], <= 0.
    z_samples : array_like
        Heights of the samples [m], <= 0, strictly monotone (increasing or
        decreasing), at least two.
    temperature_samples_c : array_like
        Temperatures at ``z_samples`` [°C], finite.
    outside : {"raise", "hold"}, optional
        What to do for a height outside the samples: raise ``ValueError``
        (default) or hold the temperature of the nearest end sample.

    Returns
    -------
    float or ndarray
        T(z) [°C], the shape of ``z``.
    """
    return TabulatedTemperature(z_samples, temperature_samples_c, outside).temperature(z)


class TabulatedTemperature(TemperatureProfile):
    """Temperature profile from samples, linearly interpolated in z.

    Parameters
    ----------
    z : array_like
        Heights of the samples [m], <= 0, strictly monotone, at least two.
    temperature_c : array_like
        Temperatures at those heights [°C], finite (NaN raises).
    outside : {"raise", "hold"}, optional
        Outside the sampled heights: raise ``ValueError`` (default) or hold
        the end values.

    Raises
    ------
    ValueError
        For unsorted or repeated heights, NaN, mismatched shapes, fewer than
        two samples, heights above the surface or an unknown ``outside``.
    """

    def __init__(self, z, temperature_c, outside="raise"):
        self.z, self.temperature_c = _check_table(z, temperature_c)
        if outside not in ("raise", "hold"):
            raise ValueError(f"outside must be 'raise' or 'hold', got {outside!r}")
        self.outside = outside

    def _temperature(self, z):
        lo, hi = self.z[0], self.z[-1]
        if self.outside == "raise" and (np.any(z < lo) or np.any(z > hi)):
            raise ValueError(f"z must lie within the tabulated heights [{lo}, {hi}] m "
                             f"(or pass outside='hold'), got values from "
                             f"{float(np.min(z))!r} to {float(np.max(z))!r} m")
        return np.interp(z, self.z, self.temperature_c)

    def __repr__(self):
        return (f"TabulatedTemperature(<{self.z.size} samples from {self.z[0]} to "
                f"{self.z[-1]} m>, outside={self.outside!r})")


# --------------------------------------------------------------------------- linear

def linear_temperature(z, surface_c, gradient_c_per_m):
    """Temperature rising linearly with depth.

    T(z) = surface_c + gradient_c_per_m · (-z): the gradient is the warming
    per metre of DEPTH, so a positive gradient makes the ice warmer below the
    surface (the usual case in a polar ice sheet heated from below).

    Parameters
    ----------
    z : float or array_like
        Height [m], <= 0.
    surface_c : float
        Temperature at the surface z = 0 [°C].
    gradient_c_per_m : float
        dT/d(depth) [°C/m] (= -dT/dz); e.g. 0.016 °C/m for -50 °C at the
        surface and -10 °C at 2500 m depth.

    Returns
    -------
    float or ndarray
        T(z) [°C], the shape of ``z``.
    """
    return LinearTemperature(surface_c, gradient_c_per_m).temperature(z)


class LinearTemperature(TemperatureProfile):
    """T(z) = surface_c + gradient_c_per_m · (-z): warming per metre of depth.

    Parameters
    ----------
    surface_c : float
        Temperature at the surface [°C], > -273.15.
    gradient_c_per_m : float
        Warming per metre of depth [°C/m] (positive: warmer below).
    """

    def __init__(self, surface_c, gradient_c_per_m):
        self.surface_c = finite_float("surface_c", surface_c)
        if self.surface_c <= -273.15:
            raise ValueError(f"surface_c must be above absolute zero (-273.15 °C), "
                             f"got {surface_c!r}")
        self.gradient_c_per_m = finite_float("gradient_c_per_m", gradient_c_per_m)

    def _temperature(self, z):
        return self.surface_c + self.gradient_c_per_m * (-z)

    def __repr__(self):
        return (f"LinearTemperature(surface_c={self.surface_c!r}, "
                f"gradient_c_per_m={self.gradient_c_per_m!r})")


# --------------------------------------------------------------------------- Robin

def robin_temperature(z, surface_c, accumulation_m_per_yr, geothermal_flux_w_m2, thickness_m,
                      conductivity=ICE_CONDUCTIVITY, diffusivity=None):
    r"""Steady-state temperature of an ice column with vertical advection (Robin solution).

    Robin, G. de Q. (1955), Ice movement and temperature distribution in
    glaciers and ice sheets, Journal of Glaciology 2(18), 523–532 (title
    confirmed; volume and pages as cited in the project brief); see also
    Cuffey, K. M. & Paterson,
    W. S. B. (2010), The Physics of Glaciers, 4th ed., Butterworth-Heinemann,
    ch. 9 (the "Robin solution").

    Let ζ = z + H be the height above the bed (H = ``thickness_m``; the bed
    is at z = -H, the surface at z = 0).  The ice moves down with the
    vertical velocity w(ζ) = -a ζ / H, falling linearly from the accumulation
    rate a at the surface to zero at the bed; there is no horizontal
    advection and no strain heating.  The steady heat equation is

        κ d²T/dζ² - w dT/dζ = κ d²T/dζ² + (a ζ / H) dT/dζ = 0,

    with T(H) = T_s at the surface and an upward heat flux -k dT/dζ = G at
    the bed (the geothermal flux G flows up into the ice, so dT/dζ(0) = -G/k).  With
    l = sqrt(2 κ H / a) the first integral is dT/dζ = -(G/k) exp(-ζ²/l²),
    and integrating from ζ to the surface,

        T(z) = T_s + (G/k) ∫_ζ^H exp(-s²/l²) ds
             = T_s + (√π / 2) l (G/k) [erf(H/l) - erf((z + H)/l)].

    As a → 0 (l → ∞) this tends to the linear profile T_s + (G/k)(-z).

    Parameters
    ----------
    z : float or array_like
        Height [m], -thickness_m <= z <= 0.
    surface_c : float
        Surface (mean annual) temperature T_s [°C].
    accumulation_m_per_yr : float
        Accumulation rate a in ice equivalent [m/yr], >= 0 (0 gives the
        linear conduction profile); a year is 365.25 d.
    geothermal_flux_w_m2 : float
        Geothermal heat flux G into the base of the ice [W/m²], >= 0.
    thickness_m : float
        Ice thickness H [m], > 0.
    conductivity : float, optional
        Thermal conductivity k of ice [W m^-1 K^-1] (default 2.1, a value of
        common practice for ice near 0 °C; recalled from memory).
    diffusivity : float, optional
        Thermal diffusivity κ [m²/s]; default k / (ρ c) with ρ = 917 kg/m³ and
        c = 2097 J kg^-1 K^-1 (1.09e-6 m²/s for k = 2.1; ice values near
        0 °C recalled from memory, not confirmed against the book).

    Returns
    -------
    float or ndarray
        T(z) [°C], the shape of ``z``.

    Notes
    -----
    Departures from the source: heights are measured up from the surface
    (z = 0 at the surface, -H at the bed) rather than up from the bed; the
    conductivity and diffusivity are constants (they vary with temperature in
    real ice); the result is not capped at the pressure-melting point, so
    a large flux or a thick column can give a basal temperature above melting,
    which is outside the model (there the bed would melt and the flux condition
    would no longer hold).  The erf difference is evaluated through erfc where
    both arguments are large, to avoid cancellation.
    """
    return RobinTemperature(surface_c, accumulation_m_per_yr, geothermal_flux_w_m2,
                            thickness_m, conductivity, diffusivity).temperature(z)


class RobinTemperature(TemperatureProfile):
    """Steady-state Robin (1955) profile; see ``robin_temperature`` for the model.

    Parameters
    ----------
    surface_c : float
        Surface temperature [°C].
    accumulation_m_per_yr : float
        Ice-equivalent accumulation rate [m/yr], >= 0.
    geothermal_flux_w_m2 : float
        Basal geothermal heat flux [W/m²], >= 0.
    thickness_m : float
        Ice thickness [m], > 0; valid heights are -thickness_m <= z <= 0.
    conductivity : float, optional
        Thermal conductivity [W m^-1 K^-1], > 0.
    diffusivity : float, optional
        Thermal diffusivity [m²/s], > 0 (default conductivity / (917 · 2097)).

    Attributes
    ----------
    diffusion_length_m : float
        l = sqrt(2 κ H / a) [m] (inf for a = 0).
    """

    def __init__(self, surface_c, accumulation_m_per_yr, geothermal_flux_w_m2, thickness_m,
                 conductivity=ICE_CONDUCTIVITY, diffusivity=None):
        self.surface_c = finite_float("surface_c", surface_c)
        if self.surface_c <= -273.15:
            raise ValueError(f"surface_c must be above absolute zero (-273.15 °C), "
                             f"got {surface_c!r}")
        self.accumulation_m_per_yr = finite_float("accumulation_m_per_yr",
                                                  accumulation_m_per_yr)
        if self.accumulation_m_per_yr < 0.0:
            raise ValueError(f"accumulation_m_per_yr must be >= 0 m/yr, "
                             f"got {accumulation_m_per_yr!r}")
        self.geothermal_flux_w_m2 = finite_float("geothermal_flux_w_m2", geothermal_flux_w_m2)
        if self.geothermal_flux_w_m2 < 0.0:
            raise ValueError(f"geothermal_flux_w_m2 must be >= 0 W/m², "
                             f"got {geothermal_flux_w_m2!r}")
        self.thickness_m = positive_float("thickness_m", thickness_m)
        self.conductivity = positive_float("conductivity", conductivity)
        if diffusivity is None:
            self.diffusivity = self.conductivity / (ICE_DENSITY * ICE_HEAT_CAPACITY)
        else:
            self.diffusivity = positive_float("diffusivity", diffusivity)
        self.z_min = -self.thickness_m
        a = self.accumulation_m_per_yr / SECONDS_PER_YEAR
        self.diffusion_length_m = (math.sqrt(2.0 * self.diffusivity * self.thickness_m / a)
                                   if a > 0.0 else math.inf)

    def _temperature(self, z):
        g_over_k = self.geothermal_flux_w_m2 / self.conductivity
        if math.isinf(self.diffusion_length_m):
            return self.surface_c + g_over_k * (-z)
        ell = self.diffusion_length_m
        upper = self.thickness_m / ell
        lower = (z + self.thickness_m) / ell
        from scipy import special  # imported on use: keeps `import firnray` fast

        # erf(upper) - erf(lower) without cancellation: erfc form for large arguments.
        diff = np.where(lower > 0.5,
                        special.erfc(lower) - special.erfc(upper),
                        special.erf(upper) - special.erf(lower))
        return self.surface_c + 0.5 * math.sqrt(math.pi) * ell * g_over_k * diff

    def __repr__(self):
        return (f"RobinTemperature(surface_c={self.surface_c!r}, "
                f"accumulation_m_per_yr={self.accumulation_m_per_yr!r}, "
                f"geothermal_flux_w_m2={self.geothermal_flux_w_m2!r}, "
                f"thickness_m={self.thickness_m!r}, conductivity={self.conductivity!r}, "
                f"diffusivity={self.diffusivity!r})")


# --------------------------------------------------------------------------- cubic fit

#: Coefficients (c0, c1, c2, c3) of the cold-plateau cubic T = Σ c_i d^i,
#: d = depth [m], T [°C]; see ``cold_plateau_cubic_temperature``.
COLD_PLATEAU_CUBIC = (-51.0696, 0.00267687, -1.59061e-08, 1.83415e-09)

#: Lowest height at which the cold-plateau cubic is offered [m] (about the bed).
COLD_PLATEAU_CUBIC_Z_MIN = -2800.0


def cold_plateau_cubic_temperature(z):
    """Cubic fit to the measured borehole temperatures of a cold high-plateau site.

    T(d) = -51.0696 + 2.67687e-3 d - 1.59061e-8 d² + 1.83415e-9 d³  [°C],
    d = -z the depth below the snow surface [m].

    The data are the deep borehole temperatures measured at the geographic
    South Pole and published by Price, P. B. et al. (2002), Temperature
    profile for glacial ice at the South Pole: implications for life in a
    nearby subglacial lake, Proc. Natl. Acad. Sci. 99(12), 7844–7847,
    doi:10.1073/pnas.082238999 (DOI recalled from memory, not confirmed),
    together with later in-hole sensor readings
    at the same site.  The cubic itself is not in that paper: it is a
    least-squares fit posted on a public university web note on ice
    properties for radio detectors at the site.  The coefficients were
    CONFIRMED against that web note (which also states that the data do not
    reach the bed and that the fit gives -3.43 °C at 2800 m depth); they were
    not checked against a refereed publication.

    Parameters
    ----------
    z : float or array_like
        Height [m], -2800 <= z <= 0.

    Returns
    -------
    float or ndarray
        T(z) [°C], the shape of ``z``.

    Notes
    -----
    The fit's data span roughly 0.8–2.45 km depth (recalled from memory, not
    confirmed); its surface value (-51.07 °C) matches the site's mean annual
    temperature of about -50 °C (recalled from memory).  Shallower than the
    data and below about 2.45 km the cubic is an extrapolation; below
    2800 m (about the bed) it rises quickly above the melting point and is
    refused here.  The top ~15 m, where the seasonal wave penetrates, is not
    modelled.
    """
    return ColdPlateauCubicTemperature().temperature(z)


class ColdPlateauCubicTemperature(TemperatureProfile):
    """Cubic borehole-temperature fit of a cold high-plateau site (see
    ``cold_plateau_cubic_temperature``); valid for -2800 <= z <= 0 m."""

    z_min = COLD_PLATEAU_CUBIC_Z_MIN

    def _temperature(self, z):
        d = -z
        c0, c1, c2, c3 = COLD_PLATEAU_CUBIC
        return c0 + d * (c1 + d * (c2 + d * c3))

    def __repr__(self):
        return "ColdPlateauCubicTemperature()"

"""Field attenuation length models L(z, f) [m] of polar ice.

Convention (used everywhere in firnray): L is the attenuation length of the
FIELD amplitude, E ∝ exp(-s / L) along a path of length s.  The power
(intensity) falls as exp(-2 s / L), so the power attenuation length is L / 2.
The loss in dB is the same number whether counted for the field or for the
power: 20 log10(E0/E) = 10 log10(P0/P) = 20 log10(e) s / L ≈ 8.686 s / L dB
(``field_loss_db`` and ``power_loss_db``).

Every model has ``length(z, frequency_mhz)`` with height ``z`` [m] (0 at the
snow surface, negative in the ice) and frequency [MHz]; the two broadcast
against each other (scalar in, scalar out; arrays in, arrays out).  The
models describe the ice: a height above the surface (z > 0) is evaluated at
the surface, z = 0 (whether air legs absorb is the caller's decision; the ray
code does not absorb in air).

Models
------
``ConstantAttenuation``      one length everywhere.
``TabulatedAttenuation``     interpolated samples in z (and optionally frequency).
``CallableAttenuation``      any vectorised user function L(z, f).
``ArrheniusAttenuation``     temperature- and chemistry-dependent conductivity
                             (``arrhenius_conductivity``) turned into a length
                             (``conductivity_to_field_attenuation_length``).
``as_attenuation``           turns a model, an object with ``.length``, a
                             callable or a number into a model.
"""

import math
import numbers

import numpy as np

from firnray.checks import finite_float, positive_float
from firnray.constants import SPEED_OF_LIGHT

#: Speed of light in vacuum [m/s] (exact by the SI definition of the metre).
SPEED_OF_LIGHT_M_PER_S = SPEED_OF_LIGHT * 1e9

#: Vacuum permittivity ε0 [F/m] (CODATA 2018 recommended value).
VACUUM_PERMITTIVITY = 8.8541878128e-12

#: Boltzmann constant in eV/K: k_B / e with both exact in the 2019 SI
#: (1.380649e-23 J/K / 1.602176634e-19 C).
BOLTZMANN_EV_PER_K = 1.380649e-23 / 1.602176634e-19

#: 0 °C in kelvin (exact by definition).
ZERO_CELSIUS_K = 273.15

#: Real relative permittivity of solid ice at radio frequencies [1] (a value
#: of common practice; √3.15 ≈ 1.775 is the usual deep-ice refractive index).
ICE_PERMITTIVITY = 3.15

#: 20 log10(e): dB per field e-fold (= 10 log10(e²), dB per two power e-folds).
DB_PER_NEPER = 20.0 / math.log(10.0)

# Parameters of the conductivity model of MacGregor et al. (2007), Table 1,
# as RECALLED FROM MEMORY (the table could not be checked against the paper):
#: Reference temperature T_r [°C] (251 K recalled; -22.15 °C).
REFERENCE_TEMPERATURE_C = 251.0 - ZERO_CELSIUS_K
#: Pure-ice conductivity at T_r [S/m] (9.2 µS/m recalled).
PURE_ICE_SIGMA = 9.2e-6
#: Activation energy of pure ice [eV] (0.51 eV recalled).
PURE_ICE_ACTIVATION_EV = 0.51
#: Molar conductivity of H+ at T_r [S m^-1 M^-1] (3.2 recalled).
H_MOLAR_CONDUCTIVITY = 3.2
#: Activation energy of the H+ term [eV] (0.20 eV recalled).
H_ACTIVATION_EV = 0.20
#: Molar conductivity of sea-salt Cl- at T_r [S m^-1 M^-1] (0.43 recalled).
CL_MOLAR_CONDUCTIVITY = 0.43
#: Activation energy of the Cl- term [eV] (0.19 eV recalled).
CL_ACTIVATION_EV = 0.19
#: Indicative polar-ice acidity [M] (1.3 µM; recalled from memory, not confirmed).
TYPICAL_H_MOLAR = 1.3e-6
#: Indicative polar-ice sea-salt chloride [M] (4.2 µM; recalled from memory,
#: not confirmed).
TYPICAL_CL_MOLAR = 4.2e-6


# --------------------------------------------------------------------------- helpers

def _array(name, value, what):
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be {what}, got {value!r}") from None
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must be finite ({what}), got {value!r}")
    return arr


def _out(values):
    values = np.asarray(values, dtype=float)
    return float(values) if values.ndim == 0 else values


def _frequencies(frequency_mhz):
    f = _array("frequency_mhz", frequency_mhz, "a frequency or array of frequencies [MHz]")
    if np.any(f <= 0.0):
        raise ValueError(f"frequency_mhz must be > 0 MHz, got {frequency_mhz!r}")
    return f


def _broadcast(z, f, z_value, f_value):
    try:
        return np.broadcast_arrays(z, f)
    except ValueError:
        raise ValueError(f"z (shape {np.shape(z_value)}) and frequency_mhz (shape "
                         f"{np.shape(f_value)}) must broadcast against each other") from None


# --------------------------------------------------------------------------- published models

def arrhenius_conductivity(temperature_c, h_molar=TYPICAL_H_MOLAR, cl_molar=TYPICAL_CL_MOLAR,
                           sigma_pure=PURE_ICE_SIGMA, e_pure_ev=PURE_ICE_ACTIVATION_EV,
                           mu_h=H_MOLAR_CONDUCTIVITY, e_h_ev=H_ACTIVATION_EV,
                           mu_cl=CL_MOLAR_CONDUCTIVITY, e_cl_ev=CL_ACTIVATION_EV,
                           reference_c=REFERENCE_TEMPERATURE_C):
    r"""High-frequency conductivity of polar ice from temperature and chemistry.

    MacGregor, J. A., Winebrenner, D. P., Conway, H., Matsuoka, K.,
    Mayewski, P. A. & Clow, G. D. (2007), Modeling englacial radar
    attenuation at Siple Dome, West Antarctica, using ice chemistry and
    temperature data, Journal of Geophysical Research 112, F03008,
    doi:10.1029/2006JF000717 (authors, title, journal and DOI confirmed; the
    parameter table could not be checked):

        σ = σ_pure exp[(E_pure/k_B)(1/T_r - 1/T)]
          + μ_H [H+] exp[(E_H/k_B)(1/T_r - 1/T)]
          + μ_Cl [Cl-] exp[(E_Cl/k_B)(1/T_r - 1/T)],

    T and T_r in kelvin, k_B the Boltzmann constant in eV/K.  Each term
    equals its prefactor at T = T_r and rises with temperature.

    Parameters
    ----------
    temperature_c : float or array_like
        Ice temperature [°C], -273.15 < T <= 0.
    h_molar : float or array_like, optional
        Acid (H+) concentration [M = mol/L], >= 0 (default 1.3e-6 M, an
        indicative polar value recalled from memory, not confirmed).
    cl_molar : float or array_like, optional
        Sea-salt chloride (Cl-) concentration [M], >= 0 (default 4.2e-6 M,
        recalled from memory, not confirmed).
    sigma_pure : float, optional
        Pure-ice conductivity at T_r [S/m] (default 9.2e-6).
    e_pure_ev : float, optional
        Pure-ice activation energy [eV] (default 0.51).
    mu_h : float, optional
        Molar conductivity of H+ at T_r [S m^-1 M^-1] (default 3.2).
    e_h_ev : float, optional
        Activation energy of the H+ term [eV] (default 0.20).
    mu_cl : float, optional
        Molar conductivity of Cl- at T_r [S m^-1 M^-1] (default 0.43).
    e_cl_ev : float, optional
        Activation energy of the Cl- term [eV] (default 0.19).
    reference_c : float, optional
        Reference temperature T_r [°C] (default -22.15 °C = 251 K).

    Returns
    -------
    float or ndarray
        σ [S/m], the broadcast shape of the array arguments.

    Notes
    -----
    All defaults are the values of the paper's parameter table AS RECALLED
    FROM MEMORY (T_r = 251 K, σ_pure = 9.2 µS/m, E_pure = 0.51 eV,
    μ_H = 3.2 S/m/M, E_H = 0.20 eV, μ_Cl = 0.43 S/m/M, E_Cl = 0.19 eV); they
    were not confirmed against the paper, whose table averages several
    laboratory data sets (other choices quoted there, e.g. for σ_pure, differ
    by tens of per cent).  Departures from the source: the API takes °C; the
    ammonium term and any frequency dependence are left out (the model is the
    high-frequency, "radar band" conductivity, taken as frequency-independent);
    concentrations are in mol/L rather than µM.
    """
    t = _array("temperature_c", temperature_c, "a temperature [°C]")
    if np.any(t <= -ZERO_CELSIUS_K) or np.any(t > 0.0):
        raise ValueError(f"temperature_c must be in (-273.15, 0] °C (ice), got {temperature_c!r}")
    h = _array("h_molar", h_molar, "a concentration [M]")
    cl = _array("cl_molar", cl_molar, "a concentration [M]")
    if np.any(h < 0.0):
        raise ValueError(f"h_molar must be >= 0 M, got {h_molar!r}")
    if np.any(cl < 0.0):
        raise ValueError(f"cl_molar must be >= 0 M, got {cl_molar!r}")
    sigma_pure = finite_float("sigma_pure", sigma_pure)
    mu_h = finite_float("mu_h", mu_h)
    mu_cl = finite_float("mu_cl", mu_cl)
    for name, value in (("sigma_pure", sigma_pure), ("mu_h", mu_h), ("mu_cl", mu_cl)):
        if value < 0.0:
            raise ValueError(f"{name} must be >= 0, got {value!r}")
    e_pure = finite_float("e_pure_ev", e_pure_ev)
    e_h = finite_float("e_h_ev", e_h_ev)
    e_cl = finite_float("e_cl_ev", e_cl_ev)
    t_r = finite_float("reference_c", reference_c) + ZERO_CELSIUS_K
    if t_r <= 0.0:
        raise ValueError(f"reference_c must be above -273.15 °C, got {reference_c!r}")
    inv = 1.0 / t_r - 1.0 / (t + ZERO_CELSIUS_K)
    sigma = (sigma_pure * np.exp(e_pure / BOLTZMANN_EV_PER_K * inv)
             + mu_h * h * np.exp(e_h / BOLTZMANN_EV_PER_K * inv)
             + mu_cl * cl * np.exp(e_cl / BOLTZMANN_EV_PER_K * inv))
    return _out(sigma)


def conductivity_to_field_attenuation_length(sigma_s_per_m, permittivity=ICE_PERMITTIVITY):
    r"""Field attenuation length of a low-loss dielectric of conductivity σ.

    With the complex permittivity ε = ε0 (ε' - i σ / (ω ε0)) the wave number
    is k = (ω/c) sqrt(ε' - i σ/(ω ε0)).  In the low-loss limit
    σ / (ω ε0 ε') ≪ 1, k ≈ (ω √ε' / c) [1 - i σ / (2 ω ε0 ε')], so the field
    decays as exp(-α_E s) with α_E = σ / (2 ε0 c √ε'), independent of
    frequency.  Hence

        power attenuation coefficient  α_P = 2 α_E = σ / (ε0 c √ε')   [1/m],
        field attenuation length       L   = 1/α_E = 2 / α_P = 2 ε0 c √ε' / σ  [m].

    This is the relation of common practice in radioglaciology (e.g. the
    one-way attenuation rate 10 log10(e) α_P · 1000 dB/km).

    Parameters
    ----------
    sigma_s_per_m : float or array_like
        Conductivity σ [S/m], > 0.
    permittivity : float, optional
        Real relative permittivity ε' [1], >= 1 (default 3.15, solid ice).

    Returns
    -------
    float or ndarray
        Field attenuation length L [m] (E ∝ exp(-s/L)); the power length is L/2.

    Notes
    -----
    Valid while σ / (ω ε0 ε') ≪ 1: for ice (σ ~ 1e-5 S/m) that holds from
    about 1 MHz upwards (common practice; not checked here because the
    function takes no frequency).
    """
    sigma = _array("sigma_s_per_m", sigma_s_per_m, "a conductivity [S/m]")
    if np.any(sigma <= 0.0):
        raise ValueError(f"sigma_s_per_m must be > 0 S/m, got {sigma_s_per_m!r}")
    eps = finite_float("permittivity", permittivity)
    if eps < 1.0:
        raise ValueError(f"permittivity must be >= 1, got {permittivity!r}")
    return _out(2.0 * VACUUM_PERMITTIVITY * SPEED_OF_LIGHT_M_PER_S * math.sqrt(eps) / sigma)


# --------------------------------------------------------------------------- dB helpers

def _loss_args(path_length_m, attenuation_length_m):
    s = _array("path_length_m", path_length_m, "a path length [m]")
    if np.any(s < 0.0):
        raise ValueError(f"path_length_m must be >= 0 m, got {path_length_m!r}")
    try:
        length = np.asarray(attenuation_length_m, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"attenuation_length_m must be a length [m], "
                         f"got {attenuation_length_m!r}") from None
    if np.any(np.isnan(length)) or np.any(length <= 0.0):
        raise ValueError(f"attenuation_length_m must be > 0 m (inf allowed: no loss), "
                         f"got {attenuation_length_m!r}")
    return s, length


def field_loss_db(path_length_m, attenuation_length_m):
    """Loss in dB of the field amplitude over a path: 20 log10(E0/E).

    With E ∝ exp(-s/L): 20 log10(e) s / L = 8.686 s / L dB.

    Parameters
    ----------
    path_length_m : float or array_like
        Path length s [m], >= 0.
    attenuation_length_m : float or array_like
        FIELD attenuation length L [m], > 0 (inf: no loss).

    Returns
    -------
    float or ndarray
        Loss [dB], >= 0.  It is the same number as ``power_loss_db``: a field
        ratio counted with 20 log10 and the matching power ratio counted with
        10 log10 give the same dB.
    """
    s, length = _loss_args(path_length_m, attenuation_length_m)
    return _out(DB_PER_NEPER * s / length)


def power_loss_db(path_length_m, attenuation_length_m):
    """Loss in dB of the power (intensity) over a path: 10 log10(P0/P).

    P ∝ exp(-2 s/L) for the FIELD length L, so 10 log10(e^(2s/L)) =
    20 log10(e) s / L = 8.686 s / L dB: numerically equal to
    ``field_loss_db`` (20 log10 of the field ratio).

    Parameters
    ----------
    path_length_m : float or array_like
        Path length s [m], >= 0.
    attenuation_length_m : float or array_like
        FIELD attenuation length L [m], > 0 (inf: no loss); the power length
        is L / 2.

    Returns
    -------
    float or ndarray
        Loss [dB], >= 0.
    """
    s, length = _loss_args(path_length_m, attenuation_length_m)
    return _out(10.0 / math.log(10.0) * (2.0 * s / length))


# --------------------------------------------------------------------------- models

class AttenuationModel:
    """Base of the attenuation models: ``length(z, frequency_mhz)`` [m].

    Subclasses implement ``_length(z, f)`` for checked, broadcast float
    arrays of heights z <= 0 [m] and frequencies f > 0 [MHz].
    """

    def length(self, z, frequency_mhz):
        """FIELD attenuation length [m] at height ``z`` [m] and frequency [MHz].

        ``z`` and ``frequency_mhz`` broadcast; heights above the surface are
        evaluated at z = 0.  Scalar in, scalar out.

        Raises
        ------
        ValueError
            For non-finite heights, frequencies <= 0 or shapes that do not
            broadcast.
        """
        z_arr = _array("z", z, "a height or array of heights [m]")
        f_arr = _frequencies(frequency_mhz)
        zb, fb = _broadcast(z_arr, f_arr, z, frequency_mhz)
        out = np.asarray(self._length(np.minimum(zb, 0.0), fb), dtype=float)
        return _out(np.broadcast_to(out, zb.shape).copy() if out.shape != zb.shape else out)

    def _length(self, z, f):
        raise NotImplementedError

    def __call__(self, z, frequency_mhz):
        """Same as ``length(z, frequency_mhz)``."""
        return self.length(z, frequency_mhz)


class ConstantAttenuation(AttenuationModel):
    """One field attenuation length everywhere and at every frequency.

    Parameters
    ----------
    length_m : float
        FIELD attenuation length [m], finite and > 0.
    """

    def __init__(self, length_m):
        self.length_m = positive_float("length_m", length_m)

    def _length(self, z, f):
        return np.full(z.shape, self.length_m)

    def __repr__(self):
        return f"ConstantAttenuation(length_m={self.length_m!r})"


def _monotone_axis(name, values, unit):
    arr = _array(name, values, f"a 1-D array of {unit}")
    if arr.ndim != 1 or arr.size < 2:
        raise ValueError(f"{name} must be a 1-D array of at least 2 values [{unit}], got "
                         f"shape {arr.shape}")
    steps = np.diff(arr)
    if np.all(steps > 0):
        return arr, False
    if np.all(steps < 0):
        return arr[::-1], True
    raise ValueError(f"{name} must be strictly monotone (no repeats), got {values!r}")


class TabulatedAttenuation(AttenuationModel):
    """Field attenuation length interpolated linearly from samples.

    Parameters
    ----------
    z : array_like
        Heights of the samples [m], strictly monotone, at least two.
    length_m : array_like
        FIELD attenuation lengths [m], finite and > 0: shape (len(z),), or
        (len(z), len(frequency_mhz)) when a frequency axis is given.
    frequency_mhz : array_like, optional
        Frequencies of the columns [MHz], > 0, strictly monotone, at least
        two.  Without it the length does not depend on frequency.
    outside : {"raise", "hold"}, optional
        A height or frequency outside the samples raises ``ValueError``
        (default) or takes the value at the nearest edge.

    Notes
    -----
    Interpolation is linear in L (bilinear in z and f with a frequency axis).
    """

    def __init__(self, z, length_m, frequency_mhz=None, outside="raise"):
        self.z, z_flipped = _monotone_axis("z", z, "m")
        lengths = _array("length_m", length_m, "an array of lengths [m]")
        if np.any(lengths <= 0.0):
            raise ValueError(f"length_m must be > 0 m everywhere, got {length_m!r}")
        if outside not in ("raise", "hold"):
            raise ValueError(f"outside must be 'raise' or 'hold', got {outside!r}")
        self.outside = outside
        if frequency_mhz is None:
            if lengths.shape != (self.z.size,):
                raise ValueError(f"length_m must have shape ({self.z.size},) like z, got "
                                 f"shape {lengths.shape}")
            self.frequency_mhz = None
            self.length_m = lengths[::-1] if z_flipped else lengths
            self._grid = None
        else:
            self.frequency_mhz, f_flipped = _monotone_axis("frequency_mhz", frequency_mhz,
                                                           "MHz")
            if np.any(self.frequency_mhz <= 0.0):
                raise ValueError(f"frequency_mhz must be > 0 MHz, got {frequency_mhz!r}")
            if lengths.shape != (self.z.size, self.frequency_mhz.size):
                raise ValueError(f"length_m must have shape ({self.z.size}, "
                                 f"{self.frequency_mhz.size}) (len(z), len(frequency_mhz)), "
                                 f"got shape {lengths.shape}")
            if z_flipped:
                lengths = lengths[::-1, :]
            if f_flipped:
                lengths = lengths[:, ::-1]
            self.length_m = lengths
            from scipy.interpolate import RegularGridInterpolator  # only here: slow import

            self._grid = RegularGridInterpolator((self.z, self.frequency_mhz), lengths,
                                                 method="linear")

    def _check_range(self, name, values, axis, unit):
        lo, hi = axis[0], axis[-1]
        if self.outside == "raise" and (np.any(values < lo) or np.any(values > hi)):
            raise ValueError(f"{name} must lie within the tabulated range [{lo}, {hi}] {unit} "
                             f"(or pass outside='hold'), got values from "
                             f"{float(np.min(values))!r} to {float(np.max(values))!r}")
        return np.clip(values, lo, hi)

    def _length(self, z, f):
        zc = self._check_range("z", z, self.z, "m")
        if self._grid is None:
            return np.interp(zc, self.z, self.length_m)
        fc = self._check_range("frequency_mhz", f, self.frequency_mhz, "MHz")
        pts = np.stack([zc.reshape(-1), fc.reshape(-1)], axis=-1)
        return self._grid(pts).reshape(z.shape)

    def __repr__(self):
        extra = ("" if self.frequency_mhz is None else
                 f" x {self.frequency_mhz.size} frequencies")
        return (f"TabulatedAttenuation(<{self.z.size} heights{extra}>, "
                f"outside={self.outside!r})")


class CallableAttenuation(AttenuationModel):
    """Wraps a user function ``func(z, frequency_mhz) -> L`` [m].

    ``func`` is called once per ``length`` call with two broadcast float
    arrays (heights [m], clamped to z <= 0, and frequencies [MHz]) and must
    return FIELD attenuation lengths [m] of that shape (or a scalar, which is
    broadcast), finite and > 0.

    Parameters
    ----------
    func : callable
        Vectorised L(z, frequency_mhz) [m].
    """

    def __init__(self, func):
        if not callable(func):
            raise ValueError(f"func must be a callable L(z, frequency_mhz), got {func!r}")
        self.func = func

    def _length(self, z, f):
        try:
            out = np.asarray(self.func(z, f), dtype=float)
        except (TypeError, ValueError) as exc:
            raise ValueError(f"func {self.func!r} must return attenuation lengths [m] "
                             f"for array arguments: {exc}") from None
        try:
            out = np.broadcast_to(out, z.shape)
        except ValueError:
            raise ValueError(f"func {self.func!r} returned shape {out.shape}, expected "
                             f"{z.shape} (the broadcast shape of z and frequency_mhz)") from None
        if not np.all(np.isfinite(out)) or np.any(out <= 0.0):
            bad = out[~(np.isfinite(out) & (out > 0.0))].reshape(-1)[0]
            raise ValueError(f"func {self.func!r} must return finite lengths > 0 m, "
                             f"got {bad!r}")
        return out

    def __repr__(self):
        return f"CallableAttenuation({self.func!r})"


def _as_profile_function(temperature_profile):
    if hasattr(temperature_profile, "temperature") and callable(temperature_profile.temperature):
        return temperature_profile.temperature
    if isinstance(temperature_profile, numbers.Real) and not isinstance(temperature_profile, bool):
        value = finite_float("temperature_profile", temperature_profile)
        return lambda z: np.full(np.shape(z), value)
    if callable(temperature_profile):
        return temperature_profile
    raise ValueError("temperature_profile must be an object with .temperature(z), a callable "
                     f"T(z) [°C] or a number [°C], got {temperature_profile!r}")


def _as_concentration(name, value):
    if callable(value):
        return value
    arr = _array(name, value, "a concentration [M] or a callable c(z)")
    if arr.ndim != 0 or arr < 0.0:
        raise ValueError(f"{name} must be a number >= 0 [M] or a callable c(z), got {value!r}")
    return float(arr)


_CONDUCTIVITY_KEYS = ("sigma_pure", "e_pure_ev", "mu_h", "e_h_ev", "mu_cl", "e_cl_ev",
                      "reference_c")


class ArrheniusAttenuation(AttenuationModel):
    """Field attenuation length from the temperature profile and chemistry of the ice.

    L(z, f) = conductivity_to_field_attenuation_length(σ(T(z), [H+], [Cl-]))
              × (f / f_ref)^(-p)   (the last factor only with ``frequency_scaling``),

    σ from ``arrhenius_conductivity`` (MacGregor et al. 2007, J. Geophys.
    Res. 112, F03008, doi:10.1029/2006JF000717; defaults recalled from
    memory, see there).

    Parameters
    ----------
    temperature_profile : TemperatureProfile, callable or float
        Ice temperature: an object with ``.temperature(z)`` [°C] (e.g. from
        ``firnray.medium.temperature``), a callable T(z) [°C], or one
        temperature [°C] for the whole column.
    h_molar : float or callable, optional
        H+ concentration [M] (default 1.3e-6), or a callable c(z) [M].
    cl_molar : float or callable, optional
        Cl- concentration [M] (default 4.2e-6), or a callable c(z) [M].
    permittivity : float, optional
        Real relative permittivity ε' of the ice [1] (default 3.15).
    frequency_scaling : float, optional
        Exponent p of an EMPIRICAL power-law frequency dependence
        L ∝ (f / reference_mhz)^(-p); default None: no frequency dependence
        (the conductivity model is frequency-independent in the radio band).
    reference_mhz : float, optional
        Frequency f_ref [MHz] at which the scaled length equals the model's
        (default 300 MHz); used only with ``frequency_scaling``.
    **conductivity_parameters
        Overrides of ``arrhenius_conductivity``'s table (``sigma_pure``,
        ``e_pure_ev``, ``mu_h``, ``e_h_ev``, ``mu_cl``, ``e_cl_ev``,
        ``reference_c``).

    Notes
    -----
    The model is for solid ice; the lower density of the firn (top ~100 m),
    which lowers both ε' and σ, is not modelled.  Heights above the surface
    are evaluated at z = 0.  Measured attenuation lengths in the radio band
    fall with frequency (e.g. Barrella, T., Barwick, S. & Saltzberg, D.
    (2011), J. Glaciol. 57(201), 61–66: ~500 m at 75 MHz to ~300 m at
    1250 MHz through an ice shelf), which the power-law option can mimic; it
    is an empirical add-on, not part of the cited conductivity model.
    """

    def __init__(self, temperature_profile, h_molar=TYPICAL_H_MOLAR, cl_molar=TYPICAL_CL_MOLAR,
                 permittivity=ICE_PERMITTIVITY, frequency_scaling=None, reference_mhz=300.0,
                 **conductivity_parameters):
        self.temperature_profile = temperature_profile
        self._temperature = _as_profile_function(temperature_profile)
        self.h_molar = _as_concentration("h_molar", h_molar)
        self.cl_molar = _as_concentration("cl_molar", cl_molar)
        self.permittivity = finite_float("permittivity", permittivity)
        if self.permittivity < 1.0:
            raise ValueError(f"permittivity must be >= 1, got {permittivity!r}")
        self.frequency_scaling = (None if frequency_scaling is None
                                  else finite_float("frequency_scaling", frequency_scaling))
        self.reference_mhz = positive_float("reference_mhz", reference_mhz)
        unknown = set(conductivity_parameters) - set(_CONDUCTIVITY_KEYS)
        if unknown:
            raise ValueError(f"unknown conductivity parameter(s) {sorted(unknown)}; expected "
                             f"some of {list(_CONDUCTIVITY_KEYS)}")
        self.conductivity_parameters = dict(conductivity_parameters)

    def conductivity(self, z):
        """Conductivity σ [S/m] at height ``z`` [m] (scalar or array; z > 0 → surface)."""
        z_arr = np.minimum(_array("z", z, "a height or array of heights [m]"), 0.0)
        return _out(self._conductivity(z_arr))

    def _conductivity(self, z):
        t = np.asarray(self._temperature(z), dtype=float)
        h = self.h_molar(z) if callable(self.h_molar) else self.h_molar
        cl = self.cl_molar(z) if callable(self.cl_molar) else self.cl_molar
        return np.asarray(arrhenius_conductivity(t, h, cl, **self.conductivity_parameters),
                          dtype=float)

    def _length(self, z, f):
        sigma = self._conductivity(z)
        out = np.asarray(conductivity_to_field_attenuation_length(sigma, self.permittivity),
                         dtype=float)
        if self.frequency_scaling is not None:
            out = out * (f / self.reference_mhz) ** (-self.frequency_scaling)
        return out

    def __repr__(self):
        return (f"ArrheniusAttenuation({self.temperature_profile!r}, h_molar={self.h_molar!r}, "
                f"cl_molar={self.cl_molar!r}, permittivity={self.permittivity!r}, "
                f"frequency_scaling={self.frequency_scaling!r}, "
                f"reference_mhz={self.reference_mhz!r})")


def as_attenuation(obj):
    """Turn ``obj`` into an attenuation model with ``length(z, frequency_mhz)``.

    Parameters
    ----------
    obj : AttenuationModel, object with ``.length``, callable or float
        A model is returned as it is; another object with a ``.length(z, f)``
        method and a plain callable L(z, f) are wrapped in
        ``CallableAttenuation``; a number is a ``ConstantAttenuation`` [m].

    Returns
    -------
    AttenuationModel

    Raises
    ------
    ValueError
        For anything else (strings, booleans, None, non-positive numbers).
    """
    if isinstance(obj, AttenuationModel):
        return obj
    if hasattr(obj, "length") and callable(obj.length):
        return CallableAttenuation(obj.length)
    if isinstance(obj, bool):
        raise ValueError(f"attenuation must be a model, a callable L(z, f) or a length [m], "
                         f"got {obj!r}")
    if isinstance(obj, numbers.Real) or (isinstance(obj, np.ndarray) and obj.ndim == 0):
        return ConstantAttenuation(obj)
    if callable(obj):
        return CallableAttenuation(obj)
    raise ValueError(f"attenuation must be a model, an object with .length(z, frequency_mhz), "
                     f"a callable L(z, frequency_mhz) or a length [m], got {obj!r}")


def depth_averaged_length(attenuation, z_top, z_bottom, frequency_mhz, nodes=256):
    """Field attenuation length averaged over a vertical path, as measured.

    <L> = D / ∫ dz / L(z, f) over z_bottom <= z <= z_top, D = z_top - z_bottom:
    the constant length that gives the same field loss over the column (how
    in-situ bulk measurements from a vertical echo are quoted).

    Parameters
    ----------
    attenuation : model, object with ``.length``, callable or float
        See ``as_attenuation``.
    z_top, z_bottom : float
        Heights of the ends of the column [m], z_bottom < z_top <= 0.
    frequency_mhz : float or array_like
        Frequencies [MHz], > 0.
    nodes : int, optional
        Gauss-Legendre nodes over the column (default 256).

    Returns
    -------
    float or ndarray
        <L> [m], the shape of ``frequency_mhz``.
    """
    model = as_attenuation(attenuation)
    top = finite_float("z_top", z_top)
    bottom = finite_float("z_bottom", z_bottom)
    if not bottom < top:
        raise ValueError(f"z_bottom must be below z_top ({top} m), got {z_bottom!r}")
    if top > 0.0:
        raise ValueError(f"z_top must be <= 0 m (in the ice), got {z_top!r}")
    if isinstance(nodes, bool) or not isinstance(nodes, numbers.Integral) or nodes < 2:
        raise ValueError(f"nodes must be an integer >= 2, got {nodes!r}")
    f = _frequencies(frequency_mhz)
    x, w = np.polynomial.legendre.leggauss(int(nodes))
    z = bottom + (top - bottom) * 0.5 * (x + 1.0)
    lengths = np.asarray(model.length(z[:, None], f.reshape(1, -1)), dtype=float)
    integral = 0.5 * (top - bottom) * np.sum(w[:, None] / lengths, axis=0)
    return _out(((top - bottom) / integral).reshape(f.shape))

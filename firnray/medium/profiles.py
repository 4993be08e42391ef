"""Refractive-index profiles n(z) of firn and ice.

Heights ``z`` are in metres, 0 at the snow surface, negative in the ice and
positive in the air, where every profile gives ``n_air``.
"""

import numpy as np

from firnray.checks import finite_float, positive_float
from firnray.medium.panels import EXPONENTIAL, UNIFORM, PanelStack

#: Default lowest height at which a profile is valid [m]: below the thickest
#: polar ice (a fact of common practice: ice sheets are at most ~4.9 km thick).
DEFAULT_Z_MIN = -5000.0


def exponential_index(z, n_deep, n_surface, scale_depth, n_air=1.0):
    """Exponential firn index profile.

    n(z) = n_deep - (n_deep - n_surface) exp(z / scale_depth) for z <= 0 and
    n_air above the surface.  This form follows from a density that relaxes
    exponentially towards that of ice with depth together with a linear
    density-index relation; it is the form of the fits cited in the bundled
    profiles (``profiles/``).

    Parameters
    ----------
    z : float or array_like
        Height [m].
    n_deep : float
        Index of deep solid ice [1].
    n_surface : float
        Index at the snow surface [1].
    scale_depth : float
        e-folding depth of the firn [m].
    n_air : float, optional
        Index above the surface [1].

    Returns
    -------
    float or ndarray
        n(z) [1], the shape of ``z``.
    """
    z_arr = np.asarray(z, dtype=float)
    with np.errstate(over="ignore"):
        n = n_deep - (n_deep - n_surface) * np.exp(np.minimum(z_arr, 0.0) / scale_depth)
    n = np.where(z_arr > 0.0, n_air, n)
    return float(n) if n.ndim == 0 else n


class IndexProfile:
    """Base of every index profile: ``index(z)``, ``n_air``, valid range, metadata.

    Attributes
    ----------
    n_air : float
        Index above the surface [1].
    z_min : float
        Lowest height where the profile is valid [m].
    info : dict
        Name, description and citation (filled by ``load_profile``).
    """

    n_air = 1.0
    z_min = DEFAULT_Z_MIN

    def index(self, z):
        """Refractive index at height ``z`` [m] (scalar or array) [1]."""
        raise NotImplementedError

    def check_height(self, name, z):
        """Raise ``ValueError`` if height ``z`` [m] lies below the valid range."""
        if z < self.z_min:
            raise ValueError(f"{name} height {z!r} m lies below the profile's valid range "
                             f"(z >= {self.z_min} m)")


class ExponentialProfile(IndexProfile):
    """Exponential firn profile n(z) = n_deep - (n_deep - n_surface) exp(z / scale_depth).

    Parameters
    ----------
    n_deep : float
        Index of deep solid ice [1].
    n_surface : float
        Index at the snow surface [1]; n_air < n_surface <= n_deep.
    scale_depth : float
        e-folding depth of the firn [m], > 0.
    n_air : float, optional
        Index above the surface [1], >= 1 (default 1.0).
    z_min : float, optional
        Lowest valid height [m] (default -5000 m).
    info : dict, optional
        Name, description and citation of the parameter set.

    Raises
    ------
    ValueError
        If a parameter is not finite or breaks 1 <= n_air < n_surface <= n_deep,
        scale_depth > 0, z_min < 0.
    """

    def __init__(self, n_deep, n_surface, scale_depth, n_air=1.0, z_min=DEFAULT_Z_MIN,
                 info=None):
        self.n_deep = finite_float("n_deep", n_deep)
        self.n_surface = finite_float("n_surface", n_surface)
        self.scale_depth = positive_float("scale_depth", scale_depth)
        self.n_air = finite_float("n_air", n_air)
        self.z_min = finite_float("z_min", z_min)
        if self.n_air < 1.0:
            raise ValueError(f"n_air must be >= 1, got {n_air!r}")
        if not self.n_surface > self.n_air:
            raise ValueError(f"n_surface must be greater than n_air ({self.n_air}), "
                             f"got {n_surface!r}")
        if not self.n_deep >= self.n_surface:
            raise ValueError(f"n_deep must be >= n_surface ({self.n_surface}), "
                             f"got {n_deep!r}")
        if not self.z_min < 0.0:
            raise ValueError(f"z_min must be below the surface (< 0 m), got {z_min!r}")
        self.info = dict(info or {})

    def index(self, z):
        """Refractive index at height ``z`` [m] (scalar or array) [1]."""
        return exponential_index(z, self.n_deep, self.n_surface, self.scale_depth, self.n_air)

    @property
    def panels(self):
        """The profile as one exponential panel (or a uniform one), see ``medium.panels``."""
        if getattr(self, "_panels", None) is None:
            a, d = self.n_deep, self.n_deep - self.n_surface
            kind, coef = (EXPONENTIAL, (a, self.scale_depth, self.n_surface, d)) if d > 0 else (
                UNIFORM, (a, 0.0, 0.0, 0.0))
            self._panels = PanelStack([0.0], [-np.inf], [kind], [coef])
        return self._panels

    @property
    def parameters(self):
        """(n_deep, n_deep - n_surface, scale_depth, n_air) as used by the kernels."""
        return (self.n_deep, self.n_deep - self.n_surface, self.scale_depth, self.n_air)

    def __repr__(self):
        return (f"ExponentialProfile(n_deep={self.n_deep!r}, n_surface={self.n_surface!r}, "
                f"scale_depth={self.scale_depth!r}, n_air={self.n_air!r}, z_min={self.z_min!r})")

    def __eq__(self, other):
        return (isinstance(other, ExponentialProfile)
                and repr(self) == repr(other))

    def __hash__(self):
        return hash(repr(self))

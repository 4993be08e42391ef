"""Figures: ray paths with the profile beside them, shadow-zone maps, D/R delay contours.

matplotlib is imported inside each function only.  Each function takes an
``ax=`` (a new figure is made when it is None) and returns the axes it drew
on (for ``plot_rays``: the ray axes and the profile axes).
"""

import numpy as np

KIND_COLOURS = {"direct": "tab:blue", "refracted": "tab:orange", "reflected": "tab:green",
                "transmitted": "tab:purple"}


def _axes(ax, **figkw):
    if ax is not None:
        return ax
    import matplotlib.pyplot as plt
    return plt.figure(**figkw).add_subplot(111)


def plot_rays(profile, rays, ax=None, profile_ax=None, n_points=300):
    """Draw ray paths (x from the source [m] against height [m]) and n(z) beside them.

    Parameters
    ----------
    profile : IndexProfile
    rays : sequence of Ray
        For example ``firnray.find_rays(...)``.
    ax : matplotlib Axes, optional
        Axes for the paths.
    profile_ax : matplotlib Axes or False, optional
        Axes for the index profile; False draws none; None makes one
        beside ``ax`` when ``ax`` is None.
    n_points : int
        Points per ray segment.

    Returns
    -------
    (Axes, Axes or None)
    """
    import matplotlib.pyplot as plt
    if ax is None:
        if profile_ax is None:
            fig, (ax, profile_ax) = plt.subplots(1, 2, figsize=(9, 4.5), sharey=True,
                                                 gridspec_kw={"width_ratios": [4, 1]})
        else:
            ax = _axes(None, figsize=(7, 4.5))
    z_low = 0.0
    seen = set()
    for ray in rays:
        pts = ray.path(n_points)
        label = ray.kind if ray.kind not in seen else None
        seen.add(ray.kind)
        ax.plot(pts["x"], pts["z"], color=KIND_COLOURS.get(ray.kind, "k"), lw=1.2,
                label=f"{label} ({ray.travel_time:.1f} ns)" if label else None)
        z_low = min(z_low, float(np.min(pts["z"])))
        ax.plot([0.0], [ray.source[2]], "k*", ms=9)
        ax.plot([pts["x"][-1]], [ray.receiver[2]], "kv", ms=7)
    ax.axhline(0.0, color="0.4", lw=0.8)
    ax.set_xlabel("horizontal distance from the source [m]")
    ax.set_ylabel("height z [m]")
    if rays:
        ax.legend(loc="lower right", fontsize=8)
    if profile_ax:
        z = np.linspace(min(z_low * 1.05, -1.0), 0.0, 400)
        profile_ax.plot(profile.index(z), z, color="k")
        profile_ax.set_xlabel("index n")
        profile_ax.axhline(0.0, color="0.4", lw=0.8)
    return ax, (profile_ax or None)


def plot_shadow_map(distance, source_z, reachable, boundary=None, ax=None, antenna_z=None):
    """Draw where rays reach the antenna (shaded: shadow zone) and the boundary.

    Parameters
    ----------
    distance : array_like, shape (nx,)
        Horizontal distances [m].
    source_z : array_like, shape (nz,)
        Source heights [m].
    reachable : ndarray of bool, shape (nz, nx)
        From ``firnray.reachability_map``.
    boundary : array_like, shape (nz,), optional
        Shadow boundary [m] per height, drawn as a line.
    ax : matplotlib Axes, optional
    antenna_z : float, optional
        Marks the antenna [m].

    Returns
    -------
    Axes
    """
    ax = _axes(ax, figsize=(7, 4.5))
    x = np.asarray(distance, float)
    z = np.asarray(source_z, float)
    ax.pcolormesh(x, z, ~np.asarray(reachable), cmap="Greys", vmin=0, vmax=2.5,
                  shading="auto")
    if boundary is not None:
        b = np.asarray(boundary, float)
        ax.plot(np.where(b > x[-1], np.nan, b), z, color="tab:red", lw=1.5,
                label="shadow boundary")
        ax.legend(loc="lower right", fontsize=8)
    if antenna_z is not None:
        ax.plot([0.0], [antenna_z], "kv", ms=8)
    ax.set_xlim(x[0], x[-1])
    ax.set_xlabel("horizontal distance from the antenna [m]")
    ax.set_ylabel("source height z [m]")
    ax.set_title("shaded: shadow zone (no ray reaches the antenna)", fontsize=9)
    return ax


def plot_delay_contours(grid, ax=None, levels=None):
    """Contours of the D/R delay [ns] of a ``DelayGrid`` (from ``firnray.dr_delays``).

    Returns
    -------
    Axes
    """
    ax = _axes(ax, figsize=(7, 4.5))
    if levels is None:
        finite = grid.delay[np.isfinite(grid.delay)]
        top = float(np.max(finite)) if finite.size else 1.0
        decades = 10.0 ** np.arange(-1, 5)
        nice = np.concatenate([decades, 2 * decades, 5 * decades])
        levels = np.sort(nice[(nice >= top / 500.0) & (nice < top)])
    cs = ax.contour(grid.distance, grid.source_z, grid.delay, levels=levels, cmap="viridis")
    ax.clabel(cs, fontsize=7, fmt="%g")
    ax.plot([0.0], [grid.antenna_z], "kv", ms=8)
    ax.set_xlabel("horizontal distance from the antenna [m]")
    ax.set_ylabel("source height z [m]")
    ax.set_title("D/R delay [ns]", fontsize=9)
    return ax

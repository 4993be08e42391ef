"""Figures: ray paths with the profile beside them, shadow-zone maps, D/R delay contours,
path loss against frequency, vertex residuals, pulls and timing residuals.

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


def plot_shadow_map(distance, source_z, reachable, boundary=None, ax=None, antenna_z=None,
                    duct_only=None):
    """Draw where rays reach the antenna (shaded: shadow zone) and the boundary.

    Parameters
    ----------
    distance : array_like, shape (nx,)
        Horizontal distances [m].
    source_z : array_like, shape (nz,)
        Source heights [m].
    reachable : ndarray of bool, shape (nz, nx)
        From ``firnray.reachability_map`` (or ``IlluminationMap.lit``).
    boundary : array_like, shape (nz,), optional
        Shadow boundary [m] per height, drawn as a line.
    ax : matplotlib Axes, optional
    antenna_z : float, optional
        Marks the antenna [m].
    duct_only : ndarray of bool, shape (nz, nx), optional
        Cells lit only by rays guided by a duct (``IlluminationMap.duct_only``,
        non-monotone profiles), drawn in light blue with a hatch; the
        boundary line is then that of rays without a duct.

    Returns
    -------
    Axes
    """
    ax = _axes(ax, figsize=(7, 4.5))
    x = np.asarray(distance, float)
    z = np.asarray(source_z, float)
    ax.pcolormesh(x, z, ~np.asarray(reachable), cmap="Greys", vmin=0, vmax=2.5,
                  shading="auto")
    handles = []
    if duct_only is not None and np.any(duct_only):
        from matplotlib.patches import Patch
        duct = np.asarray(duct_only, dtype=float)
        ax.pcolormesh(x, z, np.ma.masked_where(duct == 0, duct), cmap="Blues", vmin=0.0,
                      vmax=2.5, shading="auto")
        ax.contourf(x, z, duct, levels=[0.5, 1.5], colors="none", hatches=["////"])
        handles.append(Patch(facecolor=(0.75, 0.85, 0.95), hatch="////", edgecolor="0.3",
                             label="lit only through a duct"))
    if boundary is not None:
        b = np.asarray(boundary, float)
        label = "shadow boundary" if duct_only is None else "boundary of rays without a duct"
        handles += ax.plot(np.where(b > x[-1], np.nan, b), z, color="tab:red", lw=1.5,
                           label=label)
    if handles:
        ax.legend(handles=handles, loc="lower right", fontsize=8)
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



def plot_path_loss(budgets, ax=None, labels=None, polarisation="s", linestyle="-"):
    """Path loss [dB] against frequency [MHz], one line per ray's ``SignalBudget``.

    Parameters
    ----------
    budgets : sequence of SignalBudget
        For example ``[firnray.signal_budget(r, freqs, model) for r in rays]``;
        each needs at least two frequencies to draw a line.
    ax : matplotlib Axes, optional
        Axes to draw on; None makes a new figure.
    labels : sequence of str, optional
        Legend label per budget (default: the ray kind).
    polarisation : {"s", "p"}
        Which total path loss to draw (``total_db_s`` or ``total_db_p``).
    linestyle : str
        Matplotlib line style, so that several attenuation models can share
        the axes.

    Returns
    -------
    Axes
        Frequency on a logarithmic axis [MHz], path loss [dB] (larger is
        weaker), lines coloured by ray kind.
    """
    if polarisation not in ("s", "p"):
        raise ValueError(f"polarisation must be 's' or 'p', got {polarisation!r}")
    budgets = list(budgets)
    if labels is not None and len(labels) != len(budgets):
        raise ValueError(f"labels must hold one label per budget ({len(budgets)}), "
                         f"got {len(labels)}")
    ax = _axes(ax, figsize=(7, 4.5))
    for i, bud in enumerate(budgets):
        label = bud.kind if labels is None else labels[i]
        ax.plot(bud.frequencies, getattr(bud, f"total_db_{polarisation}"), linestyle,
                color=KIND_COLOURS.get(bud.kind, "k"), lw=1.5, label=label)
    ax.set_xscale("log")
    ax.set_xlabel("frequency [MHz]")
    ax.set_ylabel(f"path loss, {polarisation} polarisation [dB]")
    if budgets:
        ax.legend(loc="best", fontsize=8)
    return ax


RESIDUAL_COLOURS = {"x": "tab:blue", "y": "tab:orange", "z": "tab:green"}


def plot_vertex_residuals(report, ax=None, bins=None):
    """Overlaid histograms of the vertex residuals (fitted - true) per coordinate.

    Parameters
    ----------
    report : ReconstructionReport
        From ``firnray.studies.reconstruction.validate_reconstruction``.
    ax : matplotlib Axes, optional
        Axes to draw on; None makes a new figure.
    bins : int, optional
        Number of bins [1], shared by the three coordinates; None picks
        ``2 N**(1/3)`` (at least 8).

    Returns
    -------
    Axes
    """
    r = _report_array(report, "residual")
    ax = _axes(ax, figsize=(7, 4.5))
    edges = np.histogram_bin_edges(r, bins=_bin_count(bins, r.shape[0]))
    for j, c in enumerate(("x", "y", "z")):
        ax.hist(r[:, j], bins=edges, histtype="step", lw=1.5, color=RESIDUAL_COLOURS[c],
                label=f"{c}: bias {report.bias[j]:+.2f} m, "
                      f"resolution {report.resolution[j]:.2f} m")
    ax.axvline(0.0, color="0.4", lw=0.8)
    ax.set_xlabel("vertex residual, fitted - true [m]")
    ax.set_ylabel("events per bin")
    ax.set_title(f"{r.shape[0]} events; resolution: half width of the central 68.27 %",
                 fontsize=9)
    ax.legend(loc="upper right", fontsize=8)
    return ax


def plot_pulls(report, ax=None, bins=None):
    """Histograms of the pulls (residual / sigma) per coordinate with a unit Gaussian.

    Parameters
    ----------
    report : ReconstructionReport
        Made with uncertainties (``report.pull`` is not None).
    ax : matplotlib Axes, optional
        Axes to draw on; None makes a new figure.
    bins : int, optional
        Number of bins [1] over the drawn range (at least -4 to 4); None
        picks ``2 N**(1/3)`` (at least 8).

    Returns
    -------
    Axes
        Histograms normalised to all N events (a probability density [1]),
        so that pulls outside the drawn range lower the curve; the legend
        counts them.
    """
    p = _report_array(report, "pull")
    ax = _axes(ax, figsize=(7, 4.5))
    n = p.shape[0]
    lim = min(10.0, max(4.0, float(np.max(np.abs(p)))))
    edges = np.linspace(-lim, lim, _bin_count(bins, n) + 1)
    width = edges[1] - edges[0]
    for j, c in enumerate(("x", "y", "z")):
        outside = int(np.sum(np.abs(p[:, j]) > lim))
        extra = f", {outside} outside" if outside else ""
        ax.hist(p[:, j], bins=edges, weights=np.full(n, 1.0 / (n * width)), histtype="step",
                lw=1.5, color=RESIDUAL_COLOURS[c],
                label=f"{c}: width {report.pull_width[j]:.2f}, "
                      f"coverage {report.coverage[j]:.2f}{extra}")
    u = np.linspace(-lim, lim, 400)
    ax.plot(u, np.exp(-0.5 * u ** 2) / np.sqrt(2.0 * np.pi), "k--", lw=1.2,
            label="unit Gaussian")
    ax.set_xlabel("pull, (fitted - true) / sigma [1]")
    ax.set_ylabel("density [1]")
    ax.set_title(f"{n} events; expected: width 1, coverage 0.683", fontsize=9)
    ax.legend(loc="upper right", fontsize=8)
    return ax


def plot_timing_residuals(antenna_ids, residuals_ns, ax=None):
    """Timing residuals [ns] per antenna as box plots with the single values beside them.

    Parameters
    ----------
    antenna_ids : sequence of str
        Antenna names, one per entry of ``residuals_ns``.
    residuals_ns : sequence of array_like
        Per antenna, the timing residuals (measured - predicted arrival
        time) [ns] of the events; non-finite values are left out.
    ax : matplotlib Axes, optional
        Axes to draw on; None makes a new figure.

    Returns
    -------
    Axes
    """
    ids = [str(a) for a in antenna_ids]
    try:
        groups = [np.asarray(v, dtype=float).reshape(-1) for v in residuals_ns]
    except (TypeError, ValueError):
        raise ValueError("residuals_ns must be a sequence of arrays of numbers [ns], "
                         "one per antenna") from None
    if len(groups) != len(ids):
        raise ValueError(f"residuals_ns must hold one array per antenna "
                         f"({len(ids)} antenna_ids), got {len(groups)} arrays")
    if not ids:
        raise ValueError("antenna_ids must name at least one antenna, got none")
    groups = [g[np.isfinite(g)] for g in groups]
    ax = _axes(ax, figsize=(max(5.0, 0.6 * len(ids) + 2.0), 4.5))
    positions = np.arange(1, len(ids) + 1)
    filled = [i for i, g in enumerate(groups) if g.size]
    if filled:
        ax.boxplot([groups[i] for i in filled], positions=positions[filled], widths=0.5,
                   showfliers=False, manage_ticks=False)
    rng = np.random.default_rng(0)  # fixed jitter: the same figure every time
    for i in filled:
        jitter = rng.uniform(-0.12, 0.12, groups[i].size)
        ax.plot(positions[i] + 0.3 + jitter, groups[i], ".", color="tab:blue", ms=3,
                alpha=0.6)
    for i, g in enumerate(groups):
        if not g.size:
            ax.text(positions[i], 0.0, "no data", ha="center", va="bottom", fontsize=8,
                    color="0.4")
    ax.axhline(0.0, color="0.4", lw=0.8)
    ax.set_xticks(positions)
    crowded = len(ids) > 6
    ax.set_xticklabels(ids, rotation=45 if crowded else 0, ha="right" if crowded else "center")
    ax.set_xlim(0.4, len(ids) + 0.8)
    ax.set_xlabel("antenna")
    ax.set_ylabel("timing residual, measured - predicted [ns]")
    return ax


def _report_array(report, name):
    values = getattr(report, name, None)
    if values is None:
        what = ("a ReconstructionReport made with sigma (uncertainties)" if name == "pull"
                else "a ReconstructionReport")
        raise ValueError(f"report must be {what}; it has no {name!r}")
    return np.asarray(values, dtype=float)


def _bin_count(bins, n):
    if bins is None:
        return max(8, int(round(2.0 * n ** (1.0 / 3.0))))
    if isinstance(bins, bool) or not isinstance(bins, (int, np.integer)) or bins < 1:
        raise ValueError(f"bins must be an integer >= 1, got {bins!r}")
    return int(bins)


def plot_index_profile(profile, depth, fit=None, samples=None, ax=None):
    """Draw n against depth, with an index fit and the samples it was made from.

    Parameters
    ----------
    profile : IndexProfile
    depth : array_like
        Depths below the surface to draw [m] (>= 0, positive down).
    fit : IndexFit, optional
        Drawn dashed over the profile (``firnray.fit_exponential_index``).
    samples : tuple of array_like, optional
        (depth [m], n [1]) points to mark, for example a table's samples.
    ax : matplotlib Axes, optional

    Returns
    -------
    matplotlib Axes
    """
    ax = _axes(ax, figsize=(4.5, 6.0))
    d = np.asarray(depth, dtype=float)
    ax.plot(profile.index(-d), d, color="tab:blue", label="profile")
    if samples is not None:
        ax.plot(samples[1], samples[0], ".", color="0.3", ms=3, label="samples")
    if fit is not None:
        ax.plot(fit.evaluate(-d), d, "--", color="tab:orange", label=f"{fit.kind} fit")
    ax.invert_yaxis()
    ax.set_xlabel("refractive index n")
    ax.set_ylabel("depth [m]")
    ax.legend(loc="lower left")
    ax.grid(alpha=0.3)
    return ax

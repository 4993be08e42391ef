"""The ``firnray demo`` tour on the bundled invented site and station.

Five invented sources in the ice of the invented Tallow Dome site and the
bundled demo station ``tallow-dome-demo`` (deep antennas on four strings,
three just below the surface), in the default profile ``demo-dry-firn``:

1. every ray from each source to each antenna, and the D/R delay table;
2. the ray paths from one source to every antenna, with n(z) beside them;
3. shadow-zone maps for the station's antenna depths;
4. D/R delay contours for one antenna;
5. the path loss against frequency of the rays from one source to one antenna;
6. a vertex round trip: simulated arrival times of random vertices, the
   vertex fit of each, residuals and pulls.

``run(out)`` writes the figures (PNG), ``summary.md`` (figures linked, the key
numbers in tables) and ``summary.json`` (the same numbers, full precision)
into ``out``.  ``compute()`` gives the numbers alone, as a dict shaped like
``summary.json``.  Everything is deterministic: the noise of the round trip
comes from seeded generators (``numpy.random.default_rng([ROUND_TRIP_SEED, i])``
for event ``i``).
"""

import json
import math
import os
import sys
import time
import warnings

import numpy as np

import firnray
from firnray.errors import FirnrayWarning
from firnray.faces.cli import DEMO_COLUMN
from firnray.medium.attenuation import ArrheniusAttenuation
from firnray.medium.files import DEFAULT_PROFILE
from firnray.medium.temperature import RobinTemperature
from firnray.rays.solve import find_rays
from firnray.signal.budget import signal_budget
from firnray.studies.delays import dr_delays
from firnray.studies.reconstruction import validate_reconstruction
from firnray.studies.shadow import reachability_map, shadow_boundary
from firnray.studies.station import load_station
from firnray.studies.vertex import fit_vertex, predict_arrivals, simulate_arrivals

#: The bundled invented station of the demo.
DEMO_STATION = "tallow-dome-demo"

#: Invented sources in the ice: name -> (x, y, z) [m] in the station's frame.
DEMO_SOURCES = {
    "near": (350.0, 120.0, -420.0),
    "mid": (820.0, -310.0, -880.0),
    "shallow": (-640.0, 260.0, -260.0),
    "far": (1450.0, 600.0, -1350.0),
    "deep": (-300.0, -1100.0, -1700.0),
}

#: Source drawn in the ray-path figure and used for the signal budget.
PATH_SOURCE = "mid"

#: Antenna of the D/R contours and the signal budget.
DEMO_ANTENNA = "A1-top"

#: Source heights [m] at which the shadow boundary is tabulated.
SHADOW_HEIGHTS = (-250.0, -500.0, -1000.0, -1500.0, -2000.0)

#: Grid of the shadow-zone maps: distances [m] and source heights [m].
SHADOW_DISTANCE = (0.0, 3000.0, 301)
SHADOW_Z = (-2000.0, -1.0, 200)

#: Grid of the D/R contours (nodes every 20 m) and the nodes tabulated in the summary.
DELAY_DISTANCE = (0.0, 3000.0, 151)
DELAY_Z = (-2000.0, -20.0, 100)
DELAY_TABLE_DISTANCE = (500.0, 1000.0, 2000.0)
DELAY_TABLE_Z = (-500.0, -1000.0, -1500.0)

#: Frequencies of the path-loss curve [MHz] and those tabulated in the summary.
TABLE_FREQUENCIES_MHZ = (100.0, 200.0, 400.0, 800.0)
FREQUENCIES_MHZ = tuple(float(f) for f in np.unique(np.concatenate(
    [np.geomspace(50.0, 1000.0, 25), TABLE_FREQUENCIES_MHZ])))

#: Exponent p of the empirical power law L ∝ (f / 300 MHz)^-p of the second
#: attenuation model: the slope between the ice-shelf attenuation lengths quoted
#: in the Notes of ``ArrheniusAttenuation`` (about 500 m at 75 MHz, 300 m at
#: 1250 MHz: ln(5/3) / ln(1250/75) = 0.18).
FREQUENCY_SCALING = 0.18

#: Vertex round trip: number of events, noise seed, timing uncertainty [ns],
#: emission time [ns], half width of the horizontal box [m], heights [m], seed grid.
ROUND_TRIP_EVENTS = 40
ROUND_TRIP_SEED = 7
TIMING_SIGMA_NS = 1.0
EMISSION_TIME_NS = 1000.0
ROUND_TRIP_HALF_WIDTH = 1000.0
ROUND_TRIP_Z = (-1400.0, -300.0)
ROUND_TRIP_GRID = (17, 17, 16)

FIGURES = {
    "rays": "rays.png",
    "shadow": "shadow_map.png",
    "delays": "dr_delays.png",
    "path_loss": "path_loss.png",
    "vertex": "vertex_round_trip.png",
}

STEPS = ("rays from the sources to the antennas (the first run on a machine compiles the "
         "ray kernels, about 20 s)",
         "ray paths", "shadow-zone maps", "D/R delay contours", "signal budget",
         f"vertex round trip ({ROUND_TRIP_EVENTS} fits)", "figures and summary")


def _num(value):
    """A JSON-safe float: None for NaN or infinity."""
    value = float(value)
    return value if math.isfinite(value) else None


def _nums(values):
    return [_num(v) for v in np.asarray(values, dtype=float).reshape(-1)]


def _linspace(spec):
    start, stop, count = spec
    return np.linspace(start, stop, count)


def _nearest(grid, values):
    return [int(np.argmin(np.abs(grid - v))) for v in values]


def _depth_bands(station):
    """Antennas grouped by height rounded to 10 m: list of (ids, mean height [m])."""
    bands = {}
    for ident, pos in zip(station.ids, station.positions):
        bands.setdefault(int(round(pos[2] / 10.0)), []).append((ident, float(pos[2])))
    out = []
    for key in sorted(bands, reverse=True):
        members = bands[key]
        out.append(([m[0] for m in members], float(np.mean([m[1] for m in members]))))
    return out


class _Steps:
    """Step lines on a stream (``[3/7] shadow-zone maps ... 0.4 s``); a tqdm bar for loops
    when the stream is a terminal."""

    def __init__(self, stream):
        self.stream = stream
        self.n = 0
        self.started = None
        self.bar = None

    def _tty(self):
        try:
            return self.stream.isatty()
        except (AttributeError, ValueError):
            return False

    def start(self, iterable=None, total=None):
        """Begin the next step; with ``iterable``, return it (wrapped in a bar on a terminal)."""
        self.n += 1
        label = f"[{self.n}/{len(STEPS)}] {STEPS[self.n - 1]}"
        self.started = time.perf_counter()
        if iterable is not None and self.stream is not None and self._tty():
            from tqdm import tqdm
            self.bar = tqdm(iterable, desc=label, total=total, file=self.stream, leave=True,
                            unit="fit")
            return self.bar
        if self.stream is not None:
            self.stream.write(f"{label} ...")
            self.stream.flush()
        return iterable

    def done(self):
        if self.bar is not None:
            self.bar.close()
            self.bar = None
        elif self.stream is not None:
            self.stream.write(f" {time.perf_counter() - self.started:.1f} s\n")
            self.stream.flush()


def compute(progress=None):
    """Every number of the demo, as a dict shaped like ``summary.json``.

    Parameters
    ----------
    progress : file-like, optional
        Stream for step lines and the progress bar of the vertex fits
        (None: silent).

    Returns
    -------
    dict
        JSON-ready (NaN and infinity as None); the objects needed for the
        figures under the key ``"_objects"``.
    """
    steps = _Steps(progress)
    steps.start()
    profile = firnray.load_profile(DEFAULT_PROFILE)
    station = load_station(DEMO_STATION)
    names = list(DEMO_SOURCES)
    sources = np.array([DEMO_SOURCES[n] for n in names])
    pred = predict_arrivals(profile, station, sources)
    kind_names = pred.kind_names
    pairs = []
    for i, name in enumerate(names):
        for a, ident in enumerate(station.ids):
            kinds = [kind_names[int(k)] for k in pred.kind[i, a] if k >= 0]
            pairs.append({"source": name, "antenna": ident, "rays": int(pred.count[i, a]),
                          "kinds": kinds,
                          "travel_time_ns": _nums(pred.travel_time[i, a, :len(kinds)]),
                          "dr_delay_ns": _num(pred.dr_delay[i, a])})
    steps.done()

    steps.start()
    path_source = np.array(DEMO_SOURCES[PATH_SOURCE])
    path_rays = {ident: find_rays(profile, path_source, pos)
                 for ident, pos in zip(station.ids, station.positions)}
    steps.done()

    steps.start()
    x_map = _linspace(SHADOW_DISTANCE)
    z_map = _linspace(SHADOW_Z)
    bands = []
    for ids, z_ant in _depth_bands(station):
        reach, boundary = reachability_map(profile, z_ant, x_map, z_map)
        positions = station.positions[[station.index(i) for i in ids]]
        dist = np.min(np.hypot(positions[None, :, 0] - sources[:, None, 0],
                               positions[None, :, 1] - sources[:, None, 1]), axis=1)
        bands.append({"antennas": ids, "antenna_z_m": z_ant,
                      "boundary_m": _nums(shadow_boundary(profile, z_ant,
                                                          np.array(SHADOW_HEIGHTS))),
                      "source_distance_m": _nums(dist),
                      "_map": (reach, boundary)})
    steps.done()

    steps.start()
    ant = station.positions[station.index(DEMO_ANTENNA)]
    x_grid = _linspace(DELAY_DISTANCE)
    z_grid = _linspace(DELAY_Z)
    grid = dr_delays(profile, float(ant[2]), x_grid, z_grid)
    cols = _nearest(x_grid, DELAY_TABLE_DISTANCE)
    rows = _nearest(z_grid, DELAY_TABLE_Z)
    delay_table = {"distance_m": [float(x_grid[c]) for c in cols],
                   "source_z_m": [float(z_grid[r]) for r in rows],
                   "delay_ns": [[_num(grid.delay[r, c]) for c in cols] for r in rows]}
    steps.done()

    steps.start()
    budget_rays = find_rays(profile, path_source, ant)
    flat = ArrheniusAttenuation(RobinTemperature(**DEMO_COLUMN))
    scaled = ArrheniusAttenuation(RobinTemperature(**DEMO_COLUMN),
                                  frequency_scaling=FREQUENCY_SCALING, reference_mhz=300.0)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", FirnrayWarning)
        budgets = [(signal_budget(r, FREQUENCIES_MHZ, flat),
                    signal_budget(r, FREQUENCIES_MHZ, scaled)) for r in budget_rays]
    pick = _nearest(np.array(FREQUENCIES_MHZ), TABLE_FREQUENCIES_MHZ)
    budget_doc = {"source": PATH_SOURCE, "antenna": DEMO_ANTENNA,
                  "attenuation": {
                      "frequency_independent": "Arrhenius conductivity (MacGregor et al. 2007) "
                                               "in the invented demo ice column (Robin 1955 "
                                               "profile, surface -45 C), as `firnray budget`",
                      "frequency_scaled": f"the same with the empirical length scaling "
                                          f"(f / 300 MHz)^-{FREQUENCY_SCALING}"},
                  "frequencies_mhz": list(FREQUENCIES_MHZ),
                  "table_frequencies_mhz": [FREQUENCIES_MHZ[k] for k in pick],
                  "notes": [str(w.message) for w in caught],
                  "rays": []}
    for r, (b_flat, b_scaled) in zip(budget_rays, budgets):
        budget_doc["rays"].append({
            "kind": r.kind, "travel_time_ns": r.travel_time,
            "equivalent_distance_m": b_flat.equivalent_distance,
            "spreading_db": b_flat.spreading_db, "fresnel_db_s": _num(b_flat.fresnel_db_s),
            "fresnel_db_p": _num(b_flat.fresnel_db_p), "interaction": b_flat.interaction,
            "near_caustic": bool(b_flat.near_caustic),
            "total_db_s": _nums(b_flat.total_db_s), "total_db_p": _nums(b_flat.total_db_p),
            "total_db_s_scaled": _nums(b_scaled.total_db_s),
            "total_db_p_scaled": _nums(b_scaled.total_db_p)})
    steps.done()

    centre = station.centre
    true, fitted, sigma, chi2, ndof, success, pulses = [], [], [], [], [], [], []
    events = steps.start(range(ROUND_TRIP_EVENTS), total=ROUND_TRIP_EVENTS)
    for i in events:
        rng = np.random.default_rng([ROUND_TRIP_SEED, i])
        vertex = np.array([centre[0] + rng.uniform(-ROUND_TRIP_HALF_WIDTH, ROUND_TRIP_HALF_WIDTH),
                           centre[1] + rng.uniform(-ROUND_TRIP_HALF_WIDTH, ROUND_TRIP_HALF_WIDTH),
                           rng.uniform(*ROUND_TRIP_Z)])
        arrivals = simulate_arrivals(profile, station, vertex, EMISSION_TIME_NS,
                                     TIMING_SIGMA_NS, rng)
        fit = fit_vertex(profile, station, arrivals, grid=ROUND_TRIP_GRID)
        true.append(vertex)
        fitted.append(fit.vertex)
        sigma.append(fit.sigma[:3])
        chi2.append(fit.chi2)
        ndof.append(fit.ndof)
        success.append(bool(fit.success))
        pulses.append(len(arrivals))
    true, fitted, sigma = np.array(true), np.array(fitted), np.array(sigma)
    good = np.array(success) & np.all(np.isfinite(sigma), axis=1)
    report = validate_reconstruction(true[good], fitted[good], sigma[good])
    vertex_doc = {"events": ROUND_TRIP_EVENTS, "seed": ROUND_TRIP_SEED,
                  "random_draws": "event i: numpy.random.default_rng([seed, i]) draws x, y, z "
                                  "uniformly in box_m, then the timing noise of "
                                  "simulate_arrivals(profile, station, vertex, "
                                  "emission_time_ns, timing_sigma_ns, rng)",
                  "timing_sigma_ns": TIMING_SIGMA_NS, "emission_time_ns": EMISSION_TIME_NS,
                  "seed_grid": list(ROUND_TRIP_GRID),
                  "box_m": {"x": [centre[0] - ROUND_TRIP_HALF_WIDTH,
                                  centre[0] + ROUND_TRIP_HALF_WIDTH],
                            "y": [centre[1] - ROUND_TRIP_HALF_WIDTH,
                                  centre[1] + ROUND_TRIP_HALF_WIDTH],
                            "z": list(ROUND_TRIP_Z)},
                  "converged": int(np.sum(good)),
                  "true_m": true.tolist(), "fitted_m": fitted.tolist(),
                  "sigma_m": [_nums(s) for s in sigma], "chi2": chi2, "ndof": ndof,
                  "success": success, "pulses": pulses,
                  "bias_m": _nums(report.bias), "resolution_m": _nums(report.resolution),
                  "pull_mean": _nums(report.pull_mean), "pull_width": _nums(report.pull_width),
                  "coverage": _nums(report.coverage), "coverage_3d": _num(report.coverage_3d),
                  "coverage_expected": _num(report.coverage_expected),
                  "coverage_error": _num(report.coverage_error)}
    steps.done()

    return {
        "firnray_version": firnray.__version__,
        "units": {"position": "m", "time": "ns", "loss": "dB (power flux)", "frequency": "MHz"},
        "profile": {"name": profile.info.get("name", DEFAULT_PROFILE),
                    "n_deep": profile.n_deep, "n_surface": profile.n_surface,
                    "scale_depth_m": profile.scale_depth,
                    "citation": profile.info.get("source", {}).get("citation", "")},
        "station": {"name": station.name, "antennas": list(station.ids),
                    "positions_m": station.positions.tolist(),
                    "delays_ns": station.delays.tolist()},
        "sources": {n: list(DEMO_SOURCES[n]) for n in names},
        "pairs": pairs,
        "shadow": {"source_z_m": list(SHADOW_HEIGHTS),
                   "bands": [{k: v for k, v in b.items() if not k.startswith("_")}
                             for b in bands]},
        "delays": {"antenna": DEMO_ANTENNA, "antenna_z_m": float(ant[2]), **delay_table},
        "budget": budget_doc,
        "vertex_round_trip": vertex_doc,
        "figures": dict(FIGURES),
        "_objects": {"profile": profile, "station": station, "path_rays": path_rays,
                     "bands": bands, "x_map": x_map, "z_map": z_map, "grid": grid,
                     "budgets": budgets, "report": report},
    }


# --------------------------------------------------------------------------- figures

def _figure(**kw):
    from matplotlib.figure import Figure  # no pyplot: no global figure state, no GUI backend
    return Figure(**kw)


def _save(fig, out, key):
    path = os.path.join(out, FIGURES[key])
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    return path


def write_figures(results, out):
    """Draw the five figures of ``results`` (from :func:`compute`) into ``out``.

    Returns
    -------
    list of str
        Paths of the PNG files written.
    """
    from firnray.faces import plots
    obj = results["_objects"]
    profile, station = obj["profile"], obj["station"]
    written = []

    fig = _figure(figsize=(9, 4.8))
    ax, pax = fig.subplots(1, 2, sharey=True, gridspec_kw={"width_ratios": [4, 1]})
    rays = [r for ident in station.ids for r in obj["path_rays"][ident]]
    plots.plot_rays(profile, rays, ax=ax, profile_ax=pax)
    src = results["sources"][PATH_SOURCE]
    ax.set_title(f"source '{PATH_SOURCE}' at z = {src[2]:.0f} m to all {len(station)} "
                 f"antennas of {station.name}", fontsize=9)
    written.append(_save(fig, out, "rays"))

    bands = obj["bands"]
    ncol = min(len(bands), 2)
    nrow = int(math.ceil(len(bands) / ncol))
    fig = _figure(figsize=(5.2 * ncol, 3.6 * nrow))
    axes = np.atleast_1d(fig.subplots(nrow, ncol, squeeze=False)).reshape(-1)
    sources = np.array([results["sources"][n] for n in results["sources"]])
    for ax, band in zip(axes, bands):
        reach, boundary = band["_map"]
        plots.plot_shadow_map(obj["x_map"], obj["z_map"], reach, boundary, ax=ax,
                              antenna_z=band["antenna_z_m"])
        dist = np.array(band["source_distance_m"], dtype=float)
        ax.plot(dist, sources[:, 2], "*", color="tab:orange", ms=9, mec="k",
                label="demo sources")
        for name, d, z in zip(results["sources"], dist, sources[:, 2]):
            if d <= obj["x_map"][-1]:
                ax.annotate(name, (d, z), textcoords="offset points", xytext=(5, 4),
                            fontsize=7)
        ax.legend(loc="lower right", fontsize=7)
        ids = ", ".join(band["antennas"])
        ax.set_title(f"antenna z = {band['antenna_z_m']:.1f} m ({ids}); shaded: shadow zone",
                     fontsize=8)
    for ax in axes[len(bands):]:
        ax.set_visible(False)
    written.append(_save(fig, out, "shadow"))

    fig = _figure(figsize=(7, 4.8))
    ax = fig.subplots()
    plots.plot_delay_contours(obj["grid"], ax=ax)
    ant = station.positions[station.index(DEMO_ANTENNA)]
    dist = np.hypot(sources[:, 0] - ant[0], sources[:, 1] - ant[1])
    ax.plot(dist, sources[:, 2], "*", color="tab:orange", ms=9, mec="k", label="demo sources")
    for name, d, z in zip(results["sources"], dist, sources[:, 2]):
        ax.annotate(name, (d, z), textcoords="offset points", xytext=(5, 4), fontsize=7)
    ax.legend(loc="lower right", fontsize=8)
    ax.set_title(f"D/R delay [ns] at antenna {DEMO_ANTENNA} (z = {ant[2]:.0f} m)", fontsize=9)
    written.append(_save(fig, out, "delays"))

    fig = _figure(figsize=(7, 4.5))
    ax = fig.subplots()
    flat = [b for b, _ in obj["budgets"]]
    scaled = [b for _, b in obj["budgets"]]
    plots.plot_path_loss(flat, ax=ax, labels=[f"{b.kind}, L independent of f" for b in flat])
    plots.plot_path_loss(scaled, ax=ax, linestyle="--",
                         labels=[f"{b.kind}, L ∝ f^-{FREQUENCY_SCALING}" for b in scaled])
    ax.set_title(f"source '{PATH_SOURCE}' to antenna {DEMO_ANTENNA}; Arrhenius attenuation "
                 f"in the invented demo ice column", fontsize=9)
    written.append(_save(fig, out, "path_loss"))

    fig = _figure(figsize=(11, 4.2))
    ax1, ax2 = fig.subplots(1, 2)
    plots.plot_vertex_residuals(obj["report"], ax=ax1)
    plots.plot_pulls(obj["report"], ax=ax2)
    written.append(_save(fig, out, "vertex"))
    return written


# --------------------------------------------------------------------------- text

def _f(value, spec):
    return "-" if value is None else format(value, spec)


def dr_table(results):
    """Lines of the D/R delay table: one row per antenna, one column per source [ns]."""
    names = list(results["sources"])
    by = {(p["source"], p["antenna"]): p for p in results["pairs"]}
    head = f"{'antenna':<9}" + "".join(f"{n:>10}" for n in names)
    lines = [head, "-" * len(head)]
    for ident in results["station"]["antennas"]:
        lines.append(f"{ident:<9}" + "".join(
            f"{_f(by[(n, ident)]['dr_delay_ns'], '.1f'):>10}" for n in names))
    return lines


def _md_table(header, rows):
    out = ["| " + " | ".join(header) + " |", "|" + "---|" * len(header)]
    out += ["| " + " | ".join(str(c) for c in row) + " |" for row in rows]
    return out


def summary_markdown(results):
    """The text of ``summary.md``."""
    prof, st = results["profile"], results["station"]
    names = list(results["sources"])
    by = {(p["source"], p["antenna"]): p for p in results["pairs"]}
    fig = results["figures"]
    md = ["# firnray demo: the invented Tallow Dome station", "",
          f"firnray {results['firnray_version']}; profile `{prof['name']}` (n_deep "
          f"{prof['n_deep']}, n_surface {prof['n_surface']}, scale depth "
          f"{prof['scale_depth_m']} m; {prof['citation'].rstrip('.')}); station `{st['name']}` "
          f"({len(st['antennas'])} antennas). Site, station and sources are invented. "
          f"Heights z are negative in the ice; times in ns; losses in dB. The same numbers "
          f"at full precision are in `summary.json`.", "",
          "## Sources", ""]
    md += _md_table(["source", "x [m]", "y [m]", "z [m]"],
                    [[n] + [f"{v:.1f}" for v in results["sources"][n]] for n in names])
    md += ["", "## D/R delays", "",
           "Second minus first pulse [ns] for each source (column) and antenna (row); "
           "`-`: fewer than two rays (the antenna is in the source's shadow zone).", ""]
    md += _md_table(["antenna"] + names,
                    [[a] + [_f(by[(n, a)]["dr_delay_ns"], ".1f") for n in names]
                     for a in st["antennas"]])
    first = results["pairs"][0]
    md += ["", f"Ray kinds (first/second pulse) at {first['antenna']}: "
           + ", ".join(f"{n}: {'/'.join(by[(n, first['antenna'])]['kinds']) or 'none'}"
                       for n in names) + ".", "",
           "## Ray paths", "",
           f"![rays from source '{PATH_SOURCE}' to every antenna]({fig['rays']})", "",
           "## Shadow zones", "",
           "Shadow boundary (the largest horizontal reach of any ray) [m] per source "
           "height, for the station's antenna depths (antennas grouped by height to 10 m):",
           ""]
    sh = results["shadow"]
    md += _md_table(["antennas", "antenna z [m]"] + [f"source z = {z:.0f} m"
                                                      for z in sh["source_z_m"]],
                    [[", ".join(b["antennas"]), f"{b['antenna_z_m']:.1f}"]
                     + [_f(v, ".1f") for v in b["boundary_m"]] for b in sh["bands"]])
    md += ["", "In the maps the stars mark the demo sources at their horizontal distance from "
           "the nearest antenna of the group.", "",
           f"![shadow-zone maps]({fig['shadow']})", "",
           "## D/R delay contours", ""]
    dl = results["delays"]
    md.append(f"D/R delay [ns] at antenna {dl['antenna']} (z = {dl['antenna_z_m']:.1f} m) "
              f"on grid nodes:")
    md.append("")
    md += _md_table(["source z [m] / distance [m]"] + [f"{x:.0f}" for x in dl["distance_m"]],
                    [[f"{z:.0f}"] + [_f(v, ".2f") for v in row]
                     for z, row in zip(dl["source_z_m"], dl["delay_ns"])])
    md += ["", f"![D/R delay contours]({fig['delays']})", "", "## Signal budget", ""]
    bd = results["budget"]
    md.append(f"Rays from source '{bd['source']}' to antenna {bd['antenna']}. Attenuation: "
              f"{bd['attenuation']['frequency_independent']}; and (\"scaled\") "
              f"{bd['attenuation']['frequency_scaled']}.")
    md.append("")
    md += _md_table(["ray", "time [ns]", "equivalent distance [m]", "spreading [dB]",
                     "Fresnel s/p [dB]", "surface contact"],
                    [[r["kind"], f"{r['travel_time_ns']:.2f}",
                      f"{r['equivalent_distance_m']:.1f}", f"{r['spreading_db']:.2f}",
                      f"{_f(r['fresnel_db_s'], '.2f')}/{_f(r['fresnel_db_p'], '.2f')}",
                      r["interaction"]] for r in bd["rays"]])
    md += ["", "Total path loss, s polarisation [dB]:", ""]
    idx = [bd["frequencies_mhz"].index(f) for f in bd["table_frequencies_mhz"]]
    header = ["f [MHz]"]
    for r in bd["rays"]:
        header += [f"{r['kind']}", f"{r['kind']} (scaled)"]
    rows = []
    for k, f in zip(idx, bd["table_frequencies_mhz"]):
        row = [f"{f:.1f}"]
        for r in bd["rays"]:
            row += [_f(r["total_db_s"][k], ".2f"), _f(r["total_db_s_scaled"][k], ".2f")]
        rows.append(row)
    md += _md_table(header, rows)
    for note in bd["notes"]:
        md += ["", f"Note: {note}."]
    md += ["", f"![path loss against frequency]({fig['path_loss']})", "",
           "Predicted signal levels are for planning and analysis; the power of a "
           "calibration transmitter and its use are set by the local radio regulations "
           "and the station's own rules.", "",
           "## Vertex round trip", ""]
    vt = results["vertex_round_trip"]
    md.append(f"{vt['events']} random vertices in x {vt['box_m']['x'][0]:.0f}..."
              f"{vt['box_m']['x'][1]:.0f} m, y {vt['box_m']['y'][0]:.0f}..."
              f"{vt['box_m']['y'][1]:.0f} m, z {vt['box_m']['z'][0]:.0f}..."
              f"{vt['box_m']['z'][1]:.0f} m; arrival times simulated at every antenna with "
              f"{vt['timing_sigma_ns']:g} ns Gaussian noise (seed {vt['seed']}), then fitted "
              f"(seed grid {'x'.join(map(str, vt['seed_grid']))}); {vt['converged']} of "
              f"{vt['events']} fits converged and enter the statistics.")
    md.append("")
    md += _md_table(["", "x", "y", "z"],
                    [["bias [m]"] + [_f(v, ".2f") for v in vt["bias_m"]],
                     ["resolution [m]"] + [_f(v, ".2f") for v in vt["resolution_m"]],
                     ["pull mean [1]"] + [_f(v, ".2f") for v in vt["pull_mean"]],
                     ["pull width [1]"] + [_f(v, ".2f") for v in vt["pull_width"]],
                     ["coverage [1]"] + [_f(v, ".3f") for v in vt["coverage"]]])
    md += ["", f"Resolution and pull width: half the width of the central 68.27 %. Expected "
           f"for correct uncertainties: pull width 1, coverage "
           f"{vt['coverage_expected']:.3f} +- {vt['coverage_error']:.3f} "
           f"(binomial, {vt['converged']} events); 3-D coverage {_f(vt['coverage_3d'], '.3f')}.",
           "", f"![vertex residuals and pulls]({fig['vertex']})", ""]
    return "\n".join(md)


def public(results):
    """``results`` without the figure objects (what ``summary.json`` holds)."""
    return {k: v for k, v in results.items() if not k.startswith("_")}


def run(out="firnray-demo", stdout=None, progress=None):
    """Run the demo: compute, print the D/R table, write figures and summaries into ``out``.

    Parameters
    ----------
    out : str or os.PathLike
        Output folder (made if missing; files in it are overwritten).
    stdout : file-like, optional
        Stream for the table and the file list (default ``sys.stdout``).
    progress : file-like, optional
        Stream for progress lines (default ``sys.stderr``).

    Returns
    -------
    dict
        The numbers, as in ``summary.json``.
    """
    stdout = sys.stdout if stdout is None else stdout
    progress = sys.stderr if progress is None else progress
    out = os.fspath(out)
    os.makedirs(out, exist_ok=True)
    started = time.perf_counter()
    results = compute(progress=progress)
    steps = _Steps(progress)
    steps.n = len(STEPS) - 1
    steps.start()
    figures = write_figures(results, out)
    doc = public(results)
    json_path = os.path.join(out, "summary.json")
    with open(json_path, "w", encoding="utf-8") as fh:
        json.dump(doc, fh, indent=1, allow_nan=False)
        fh.write("\n")
    md_path = os.path.join(out, "summary.md")
    with open(md_path, "w", encoding="utf-8") as fh:
        fh.write(summary_markdown(doc))
    steps.done()
    print(f"D/R delay [ns] (second minus first pulse) from {len(doc['sources'])} invented "
          f"sources to the antennas of {doc['station']['name']}; '-': fewer than two rays",
          file=stdout)
    for name, pos in doc["sources"].items():
        print(f"  {name:<8} at ({pos[0]:.0f}, {pos[1]:.0f}, {pos[2]:.0f}) m", file=stdout)
    print("", file=stdout)
    print("\n".join(dr_table(doc)), file=stdout)
    vt = doc["vertex_round_trip"]
    print(f"\nvertex round trip: {vt['converged']}/{vt['events']} fits converged; resolution "
          f"x/y/z {'/'.join(_f(v, '.1f') for v in vt['resolution_m'])} m, pull widths "
          f"{'/'.join(_f(v, '.2f') for v in vt['pull_width'])}", file=stdout)
    where = os.path.abspath(out)
    print(f"\nwritten to {where} in {time.perf_counter() - started:.1f} s:", file=stdout)
    for path in figures + [md_path, json_path]:
        print(f"  {os.path.basename(path)}", file=stdout)
    return doc

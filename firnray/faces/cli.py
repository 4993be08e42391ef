"""The ``firnray`` command line.

    firnray rays [--profile NAME|FILE] --source X,Z --receiver X,Z [--json]
    firnray shadow [--profile ...] --antenna-z Z [--source-z A:B:N] [--distance A:B:N] [--plot PNG]
    firnray delays [--profile ...] --antenna-z Z [--source-z A:B:N] [--distance A:B:N] [--plot PNG]
                   [--invert DELAY --at-z Z]
    firnray table build|info ...
    firnray vertex predict|fit|validate ...
    firnray profile-fit --station S --delays CSV [--free n_surface,scale_depth]
    firnray budget [--profile ...] --source X,Z --receiver X,Z --freq 100,200,400
    firnray profile NAME|FILE [--depth A:B:N] [--fit] [--plot PNG] [--json]
    firnray profiles
    firnray demo [--out DIR]

Bad input exits with code 2 and a one-line message on stderr.
"""

import argparse
import json
import math
import sys

import numpy as np

import firnray
from firnray.studies import delays as delay_study
from firnray.studies import shadow as shadow_study
from firnray.studies import tables as table_study


class UsageError(Exception):
    """Bad command-line input (exit code 2)."""


class _Parser(argparse.ArgumentParser):
    def error(self, message):
        raise UsageError(message)


def _parse_point(name, text):
    parts = text.split(",")
    if len(parts) not in (2, 3):
        raise UsageError(f"--{name} expects X,Z or X,Y,Z in metres, got {text!r}")
    try:
        values = [float(p) for p in parts]
    except ValueError:
        raise UsageError(f"--{name} expects numbers X,Z or X,Y,Z in metres, got {text!r}") from None
    if not all(math.isfinite(v) for v in values):
        raise UsageError(f"--{name} expects finite coordinates, got {text!r}")
    return tuple(values)


def _parse_grid(name, text):
    """'start:stop:count' -> evenly spaced array (or one number)."""
    parts = text.split(":")
    try:
        if len(parts) == 1:
            return np.array([float(parts[0])])
        if len(parts) == 3:
            start, stop, count = float(parts[0]), float(parts[1]), int(parts[2])
            if count >= 2 and math.isfinite(start) and math.isfinite(stop):
                return np.linspace(start, stop, count)
    except ValueError:
        pass
    raise UsageError(f"--{name} expects START:STOP:COUNT (COUNT >= 2) or one number, "
                     f"got {text!r}")


def _load(args, name=None):
    """The profile named by ``name`` or ``--profile``; bad names become usage errors."""
    try:
        return firnray.load_profile(name or args.profile)
    except ValueError as err:
        raise UsageError(str(err).splitlines()[0]) from None


def _save(fig, path):
    fig.tight_layout()
    fig.savefig(path, dpi=120)
    return path


def _fmt(value, spec):
    return "-" if value is None else format(value, spec)


def rays_table(rays, source, receiver, profile_name):
    """Readable table of rays (lines of text)."""
    lines = [f"profile {profile_name}: source {source} m -> receiver {receiver} m",
             ""]
    if not rays:
        lines.append("no ray: the receiver is in the shadow zone of the source")
        return lines
    lower = any(r.lower_turning_z is not None or r.turning_points > 1 for r in rays)
    head = (f"{'kind':<12}{'time [ns]':>14}{'launch [deg]':>14}{'arrival [deg]':>15}"
            f"{'length [m]':>13}{'turning z [m]':>15}")
    if lower:     # non-monotone firn: the lower turning height and the counts
        head += f"{'lower turn [m]':>16}{'turns':>7}{'surface refl.':>15}"
    lines.append(head)
    lines.append("-" * len(head))
    for r in rays:
        line = (f"{r.kind:<12}{r.travel_time:>14.4f}{r.launch_zenith:>14.4f}"
                f"{r.arrival_zenith:>15.4f}{r.path_length:>13.4f}"
                f"{_fmt(r.turning_z, '.3f'):>15}")
        if lower:
            line += (f"{_fmt(r.lower_turning_z, '.3f'):>16}{r.turning_points:>7d}"
                     f"{r.surface_reflections:>15d}")
        lines.append(line)
    if len(rays) == 2:
        lines.append("")
        lines.append(f"delay between the two pulses: "
                     f"{rays[1].travel_time - rays[0].travel_time:.4f} ns")
    return lines


def _cmd_rays(args):
    source = _parse_point("source", args.source)
    receiver = _parse_point("receiver", args.receiver)
    profile = _load(args)
    try:
        rays = firnray.find_rays(profile, source, receiver)
    except ValueError as err:
        raise UsageError(str(err).splitlines()[0]) from None
    name = profile.info.get("name", args.profile)
    if args.json:
        doc = {"profile": name, "source": list(source), "receiver": list(receiver),
               "units": {"travel_time": "ns", "path_length": "m", "launch_zenith": "deg",
                         "arrival_zenith": "deg", "turning_z": "m", "lower_turning_z": "m",
                         "invariant": "1"},
               "rays": [r.as_dict() for r in rays]}
        print(json.dumps(doc, indent=2))
    else:
        print("\n".join(rays_table(rays, source, receiver, name)))
    return 0


def _farthest(x, mask):
    """Largest x [m] per row where ``mask`` holds (NaN where it never does)."""
    idx = mask.shape[1] - 1 - np.argmax(mask[:, ::-1], axis=1)
    return np.where(mask.any(axis=1), x[idx], np.nan)


def _cmd_shadow(args):
    from firnray.rays.solve import is_monotone
    profile = _load(args)
    z = _parse_grid("source-z", args.source_z)
    monotone = is_monotone(profile)
    if not (math.isfinite(args.min_focusing) and args.min_focusing >= 0.0):
        raise UsageError(f"--min-focusing expects an amplitude factor >= 0, got "
                         f"{args.min_focusing}")
    if args.map_heights is not None and args.map_heights < 2:
        raise UsageError(f"--map-heights expects an integer >= 2, got {args.map_heights}")
    try:
        boundary = shadow_study.shadow_boundary(profile, args.antenna_z, z,
                                                min_focusing=args.min_focusing)
        if not monotone:
            x = _parse_grid("distance", args.distance)
            imap = shadow_study.illumination_map(profile, args.antenna_z, x, z,
                                                 min_focusing=args.min_focusing)
    except ValueError as err:
        raise UsageError(str(err)) from None
    boundary = np.atleast_1d(boundary)
    print(f"profile {profile.info.get('name', args.profile)}: antenna at z = {args.antenna_z} m")
    if monotone:
        print(f"{'source z [m]':>14}{'shadow boundary [m]':>22}")
        for zi, bi in zip(z, boundary):
            print(f"{zi:>14.2f}{bi:>22.2f}")
    else:
        print(f"non-monotone index: the boundary is that of rays without a duct; rays with an "
              f"amplitude focusing below {args.min_focusing:g} are not counted; farthest lit "
              f"distances on the --distance grid (0-{x[-1]:g} m)")
        lit = _farthest(x, imap.lit)
        duct = _farthest(x, imap.duct_only)
        print(f"{'source z [m]':>14}{'shadow boundary [m]':>22}{'farthest lit [m]':>19}"
              f"{'farthest lit only via a duct [m]':>35}")
        for zi, bi, li, di in zip(z, boundary, lit, duct):
            print(f"{zi:>14.2f}{bi:>22.2f}{_fmt_nan(li):>19}{_fmt_nan(di):>35}")
        if imap.truncated.any():
            print(f"note: {int(imap.truncated.sum())} grid point(s) have more rays than the "
                  f"solver keeps; judged on the earliest")
    if args.plot:
        import matplotlib.pyplot as plt
        x = _parse_grid("distance", args.distance)
        heights = args.map_heights or (400 if monotone else 100)
        z_map = np.linspace(float(np.min(z)), min(float(np.max(z)), 0.0), heights)
        from firnray.faces.plots import plot_shadow_map
        fig, ax = plt.subplots(figsize=(7, 4.5))
        if monotone:
            reach, b_map = shadow_study.reachability_map(profile, args.antenna_z, x, z_map)
            plot_shadow_map(x, z_map, reach, b_map, ax=ax, antenna_z=args.antenna_z)
        else:
            imap = shadow_study.illumination_map(profile, args.antenna_z, x, z_map,
                                                 min_focusing=args.min_focusing)
            b_map = shadow_study.shadow_boundary(profile, args.antenna_z, z_map,
                                                 min_focusing=args.min_focusing)
            plot_shadow_map(x, z_map, imap.lit, b_map, ax=ax, antenna_z=args.antenna_z,
                            duct_only=imap.duct_only)
        print(f"map written to {_save(fig, args.plot)}")
    return 0


def _fmt_nan(value):
    return "-" if not np.isfinite(value) else f"{value:.2f}"


def _cmd_delays(args):
    profile = _load(args)
    try:
        if args.invert is not None:
            if args.at_z is None:
                raise UsageError("--invert needs --at-z (the source height [m])")
            inv = delay_study.distance_from_delay(profile, args.antenna_z, args.at_z,
                                                  args.invert)
            sols = inv.solutions[0]
            if not len(sols):
                print(f"no distance gives a delay of {args.invert} ns at z = {args.at_z} m")
            else:
                note = " (ambiguous)" if inv.ambiguous[0] else ""
                print(f"delay {args.invert} ns at source z = {args.at_z} m -> distance "
                      f"{', '.join(f'{v:.3f}' for v in sols)} m{note}")
            return 0
        x = _parse_grid("distance", args.distance)
        z = _parse_grid("source-z", args.source_z)
        grid = delay_study.dr_delays(profile, args.antenna_z, x, z)
    except ValueError as err:
        raise UsageError(str(err)) from None
    names = grid.kind_names
    print(f"profile {profile.info.get('name', args.profile)}: antenna at z = {args.antenna_z} m; "
          f"D/R delay [ns] (first/second kind)")
    cols = np.unique(np.linspace(0, len(x) - 1, min(len(x), 6)).astype(int))
    rows = np.unique(np.linspace(0, len(z) - 1, min(len(z), 12)).astype(int))
    print(f"{'z [m] / x [m]':>14}" + "".join(f"{x[c]:>24.1f}" for c in cols))
    for r in rows:
        cells = []
        for c in cols:
            d = grid.delay[r, c]
            if np.isfinite(d):
                k1 = names[int(grid.first_kind[r, c])][:4]
                k2 = names[int(grid.second_kind[r, c])][:4]
                cells.append(f"{d:>12.2f} ({k1}/{k2})")
            else:
                cells.append(f"{'-':>12}" + " " * 12)
        print(f"{z[r]:>14.1f}" + "".join(f"{c:>24}" for c in cells))
    if args.plot:
        import matplotlib.pyplot as plt
        from firnray.faces.plots import plot_delay_contours
        fig, ax = plt.subplots(figsize=(7, 4.5))
        plot_delay_contours(grid, ax=ax)
        print(f"contours written to {_save(fig, args.plot)}")
    return 0


def _cmd_table(args):
    if args.action == "info":
        try:
            table = table_study.open_table(args.folder)
        except ValueError as err:
            raise UsageError(str(err)) from None
        rec = table.provenance
        info = {k: rec[k] for k in ("format", "version", "firnray_version", "created_utc",
                                    "profile", "antenna_z", "grid", "chunk_shape")}
        info["max_rays"] = rec.get("max_rays")
        info["slots"] = table.slots
        info["quantities"] = list(table.quantities) + ["kind", "count"]
        print(json.dumps(info, indent=2))
        return 0
    profile = _load(args)
    x = _parse_grid("distance", args.distance)
    z = _parse_grid("source-z", args.source_z)
    executor = None
    client = None
    if args.scheduler:
        try:
            from distributed import Client
        except ImportError:
            raise UsageError("--scheduler needs the 'distributed' package "
                             "(pip install dask distributed)") from None
        client = Client(args.scheduler)
        executor = client.get_executor()
    elif args.processes:
        executor = "processes"
    try:
        table = table_study.build_table(profile, args.antenna_z, x, z, args.folder,
                                        chunk_shape=(args.chunk, args.chunk), executor=executor,
                                        max_workers=args.processes or None, progress=True,
                                        max_rays=args.max_rays)
    except ValueError as err:
        raise UsageError(str(err)) from None
    finally:
        if client is not None:
            client.close()
    rep = table.interpolation_error(n_points=2000)
    err = rep[("travel_time", 0)]
    print(f"table written to {args.folder}: {len(z)} x {len(x)} nodes, {table.slots} ray "
          f"slots; interpolation error of the first travel time between the nodes: max "
          f"{err['max']:.3g} ns, 99th percentile {err['p99']:.3g} ns")
    return 0


def _station(args):
    from firnray.studies.station import load_station
    try:
        return load_station(args.station)
    except ValueError as err:
        raise UsageError(str(err)) from None


def _cmd_vertex(args):
    from firnray.studies import reconstruction, timing_files, vertex
    if args.action == "validate":
        if not args.csv:
            raise UsageError("vertex validate needs --csv FILE (true and fitted vertices)")
        try:
            report = reconstruction.validate_reconstruction(
                reconstruction.read_vertex_csv(args.csv))
        except ValueError as err:
            raise UsageError(str(err)) from None
        if args.json:
            print(json.dumps(report.as_dict(), indent=2))
        else:
            print("\n".join(report.summary()))
        if args.plot:
            import matplotlib.pyplot as plt
            from firnray.faces.plots import plot_pulls, plot_vertex_residuals
            fig, axes = plt.subplots(1, 2 if report.has_pulls else 1, figsize=(10, 4),
                                     squeeze=False)
            plot_vertex_residuals(report, ax=axes[0, 0])
            if report.has_pulls:
                plot_pulls(report, ax=axes[0, 1])
            print(f"figure written to {_save(fig, args.plot)}")
        return 0
    station = _station(args)
    profile = _load(args, args.profile or station.profile or firnray.medium.files.DEFAULT_PROFILE)
    if args.action == "predict":
        if not args.vertex:
            raise UsageError("vertex predict needs --vertex X,Y,Z")
        point = _parse_point("vertex", args.vertex)
        if len(point) != 3:
            raise UsageError("--vertex expects X,Y,Z in metres")
        pred = vertex.predict_arrivals(profile, station, point, args.emission_time)
        rows = pred.rows(0)
        if args.json:
            print(json.dumps({"vertex": list(point), "emission_time_ns": args.emission_time,
                              "pulses": [{"antenna": a, "ray": k, "kind": kind,
                                          "arrival_time_ns": t, "arrival_zenith_deg": z}
                                         for a, k, kind, t, z in rows]}, indent=2))
            return 0
        print(f"station {station.name}, profile {profile.info.get('name', '')}: vertex "
              f"{point} m emitting at {args.emission_time} ns")
        print(f"{'antenna':<10}{'ray':>4}{'kind':>12}{'arrival [ns]':>16}{'zenith [deg]':>14}"
              f"{'D/R [ns]':>11}")
        for a, k, kind, t, z in rows:
            i = station.index(a)
            dr = pred.dr_delay[0, i]
            dr_text = f"{dr:.2f}" if (k == 1 and np.isfinite(dr)) else ""
            print(f"{a:<10}{k:>4}{kind:>12}{t:>16.3f}{z:>14.3f}{dr_text:>11}")
        missing = [a for i, a in enumerate(station.ids) if pred.count[0, i] == 0]
        if missing:
            print(f"no ray (shadow zone) at: {', '.join(missing)}")
        return 0
    if not args.times:
        raise UsageError("vertex fit needs --times CSV (antenna,time_ns,sigma_ns)")
    try:
        rows = timing_files.read_arrivals_csv(args.times)
        fit = vertex.fit_vertex(profile, station, rows)
    except ValueError as err:
        raise UsageError(str(err)) from None
    names = ("x [m]", "y [m]", "z [m]", "t0 [ns]")
    values = list(fit.vertex) + [fit.emission_time]
    if args.json:
        print(json.dumps({"vertex_m": list(fit.vertex), "emission_time_ns": fit.emission_time,
                          "sigma": list(fit.sigma), "covariance": fit.covariance.tolist(),
                          "chi2": fit.chi2, "ndof": fit.ndof,
                          "multiple_minima": fit.multiple_minima, "success": fit.success},
                         indent=2))
    else:
        print(f"vertex fit on station {station.name} ({len(rows)} pulses): chi2 = "
              f"{fit.chi2:.2f} for {fit.ndof} degrees of freedom")
        for n, v, e in zip(names, values, fit.sigma):
            print(f"  {n:<8} {v:>12.3f} +- {e:.3f}")
        if fit.multiple_minima:
            print("  warning: another distinct minimum is within the chi2 margin:")
            for v, t0, c in fit.alternatives:
                print(f"    ({v[0]:.1f}, {v[1]:.1f}, {v[2]:.1f}) m, chi2 {c:.2f}")
    if args.plot:
        import matplotlib.pyplot as plt
        from firnray.faces.plots import plot_timing_residuals
        ids = list(dict.fromkeys(fit.antenna_ids))
        per = [np.array([r for r, a in zip(fit.residuals, fit.antenna_ids) if a == ident])
               for ident in ids]
        fig, ax = plt.subplots(figsize=(8, 4))
        plot_timing_residuals(ids, per, ax=ax)
        ax.set_ylabel("timing residual [sigma]")
        print(f"figure written to {_save(fig, args.plot)}")
    return 0


def _cmd_profile_fit(args):
    from firnray.studies import profile_fit, timing_files
    station = _station(args)
    initial = _load(args)
    free = tuple(f.strip() for f in args.free.split(",") if f.strip())
    try:
        data = timing_files.read_pulser_csv(args.delays, station)
        fit = profile_fit.fit_profile_to_delays(data, initial, free=free)
    except ValueError as err:
        raise UsageError(str(err)) from None
    if args.json:
        print(json.dumps({"parameters": dict(zip(fit.names, map(float, fit.values))),
                          "sigma": dict(zip(fit.names, map(float, fit.sigma))),
                          "correlation": fit.correlation.tolist(), "chi2": fit.chi2,
                          "ndof": fit.ndof, "success": fit.success}, indent=2))
    else:
        print(f"profile fit to {len(data)} pulser D/R delays (start: {initial.info.get('name', '')})")
        print("\n".join(fit.summary()))
    return 0


#: Invented demo-site ice column for the default attenuation model of ``budget``.
DEMO_COLUMN = dict(surface_c=-45.0, accumulation_m_per_yr=0.08, geothermal_flux_w_m2=0.06,
                   thickness_m=2800.0)


def _attenuation(args):
    from firnray.medium import attenuation, temperature
    if args.attenuation_length is not None:
        if not args.attenuation_length > 0:
            raise UsageError(f"--attenuation-length must be > 0 m, got {args.attenuation_length}")
        return attenuation.ConstantAttenuation(args.attenuation_length), (
            f"constant field attenuation length {args.attenuation_length} m")
    column = temperature.RobinTemperature(**DEMO_COLUMN)
    return attenuation.ArrheniusAttenuation(column), (
        "Arrhenius conductivity (MacGregor et al. 2007) in the invented demo ice column "
        "(Robin 1955 profile, surface -45 C)")


def _cmd_budget(args):
    from firnray.signal.budget import signal_budget
    source = _parse_point("source", args.source)
    receiver = _parse_point("receiver", args.receiver)
    try:
        freqs = [float(f) for f in args.freq.split(",")]
    except ValueError:
        raise UsageError(f"--freq expects comma-separated frequencies in MHz, got {args.freq!r}") from None
    if not freqs or not all(math.isfinite(f) and f > 0 for f in freqs):
        raise UsageError(f"--freq expects frequencies > 0 MHz, got {args.freq!r}")
    model, label = _attenuation(args)
    profile = _load(args)
    try:
        rays = firnray.find_rays(profile, source, receiver)
    except ValueError as err:
        raise UsageError(str(err).splitlines()[0]) from None
    import warnings
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", firnray.FirnrayWarning)
        budgets = [signal_budget(r, freqs, model) for r in rays]
    if args.json:
        print(json.dumps({"source": list(source), "receiver": list(receiver),
                          "attenuation_model": label, "units": "dB (power flux), MHz",
                          "rays": [{"kind": b.kind, "travel_time_ns": r.travel_time,
                                    "equivalent_distance_m": b.equivalent_distance,
                                    "focusing": b.focusing, "near_caustic": b.near_caustic,
                                    "focusing_capped": b.focusing_capped,
                                    "spreading_derivative_per_rad": b.spreading_derivative,
                                    "turning_points": r.turning_points,
                                    "surface_reflections": r.surface_reflections,
                                    "spreading_db": b.spreading_db,
                                    "fresnel_db_s": b.fresnel_db_s, "fresnel_db_p": b.fresnel_db_p,
                                    "frequencies_mhz": list(b.frequencies),
                                    "attenuation_db": list(b.attenuation_db),
                                    "total_db_s": list(b.total_db_s),
                                    "total_db_p": list(b.total_db_p)}
                                   for r, b in zip(rays, budgets)]}, indent=2))
        return 0
    print("\n".join(rays_table(rays, source, receiver, profile.info.get("name", args.profile))))
    print(f"\nattenuation: {label}")
    for r, b in zip(rays, budgets):
        if b.focusing_capped:
            flag = "  NEAR A CAUSTIC (focusing capped)"
        elif b.near_caustic:
            flag = "  NEAR A CAUSTIC (spreading derivative nearly vanishes)"
        else:
            flag = ""
        turns = (f", {r.turning_points} turning point(s), {r.surface_reflections} surface "
                 f"reflection(s)" if r.turning_points + r.surface_reflections > 1 else "")
        print(f"\n{r.kind} ray: equivalent distance {b.equivalent_distance:.1f} m, focusing "
              f"{b.focusing:.3f}, spreading derivative {b.spreading_derivative:.3g}/rad, "
              f"surface/layer contact: {b.interaction}{turns}{flag}")
        print(f"{'f [MHz]':>9}{'absorption [dB]':>17}{'spreading [dB]':>16}{'Fresnel s/p [dB]':>19}"
              f"{'total s [dB]':>14}{'total p [dB]':>14}")
        for f, att, spr, fs, fp, ts, tp in b.rows():
            print(f"{f:>9.1f}{att:>17.2f}{spr:>16.2f}{f'{fs:.2f}/{fp:.2f}':>19}{ts:>14.2f}{tp:>14.2f}")
    for w in caught:
        print(f"note: {w.message}")
    return 0


def _cmd_profiles(args):
    for name in firnray.bundled_profiles():
        prof = firnray.load_profile(name)
        cite = prof.info.get("source", {}).get("citation", "")
        print(f"{name:<26} {cite}")
    return 0


def _cmd_profile(args):
    prof = _load(args, args.name)
    depth = _parse_grid("depth", args.depth)
    if np.any(depth < 0) or np.any(-depth < prof.z_min):
        raise UsageError(f"--depth expects depths from 0 down to {-prof.z_min} m, got {args.depth!r}")
    n = np.atleast_1d(prof.index(-depth))
    samples = None
    fit = None
    if args.fit:
        if hasattr(prof, "z") and hasattr(prof, "n"):          # a table: fit its samples
            samples = (-prof.z, prof.n)
            z_fit, n_fit = prof.z, prof.n
        else:
            z_fit, n_fit = -depth, n
        try:
            fit = firnray.fit_exponential_index(z_fit, n_fit)
        except ValueError as err:
            raise UsageError(f"--fit: {err}") from None
    info = prof.info
    if args.json:
        out = {"name": info.get("name"), "class": type(prof).__name__,
               "citation": info.get("source", {}).get("citation", info.get("citation")),
               "depth_m": depth.tolist(), "n": n.tolist()}
        if fit is not None:
            out["fit"] = {"kind": fit.kind, "parameters": dict(fit.parameters),
                          "uncertainties": dict(fit.uncertainties), "chi2": fit.chi2,
                          "dof": fit.dof,
                          "max_abs_residual": float(np.max(np.abs(fit.residuals)))}
        print(json.dumps(out, indent=1))
    else:
        print(f"profile {info.get('name', args.name)} ({type(prof).__name__})")
        cite = info.get("source", {}).get("citation") or info.get("citation")
        if cite:
            print(f"source: {cite}")
        print(f"n_air = {prof.n_air}, valid down to z = {prof.z_min} m")
        print("")
        print(f"{'depth [m]':>10}{'z [m]':>10}{'n':>12}")
        for d, v in zip(depth, n):
            print(f"{d:>10.2f}{-d:>10.2f}{v:>12.6f}")
        if fit is not None:
            print("")
            print(fit.summary())
    if args.plot:
        import matplotlib
        matplotlib.use("Agg")
        from firnray.faces.plots import plot_index_profile
        ax = plot_index_profile(prof, np.linspace(depth.min(), depth.max(), 400), fit=fit,
                                samples=samples)
        ax.set_title(str(info.get("name", args.name)))
        print(f"wrote {_save(ax.figure, args.plot)}")
    return 0


def _cmd_demo(args):
    from firnray.faces import demo
    try:
        demo.run(args.out)
    except OSError as err:
        raise UsageError(f"--out {args.out!r}: {err.strerror or err}") from None
    return 0


def _profile_arg(p):
    p.add_argument("--profile", default=firnray.medium.files.DEFAULT_PROFILE,
                   help="bundled profile name or YAML file (default: %(default)s)")


def build_parser():
    parser = _Parser(prog="firnray", description="Radio rays through polar firn and ice.")
    parser.add_argument("--version", action="version", version=firnray.__version__)
    sub = parser.add_subparsers(dest="command", parser_class=_Parser)
    p = sub.add_parser("rays", help="every ray between a source and a receiver")
    _profile_arg(p)
    p.add_argument("--source", required=True,
                   help="source X,Z or X,Y,Z [m]; z is height, negative in the ice")
    p.add_argument("--receiver", required=True, help="receiver X,Z or X,Y,Z [m]")
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")
    p.set_defaults(func=_cmd_rays)
    p = sub.add_parser("shadow", help="shadow boundary (largest reach) per source height")
    _profile_arg(p)
    p.add_argument("--antenna-z", type=float, required=True, help="antenna height [m]")
    p.add_argument("--source-z", default="-2000:-1:21", help="source heights START:STOP:COUNT [m]")
    p.add_argument("--distance", default="0:4000:400",
                   help="distances for the map START:STOP:COUNT [m]")
    p.add_argument("--plot", help="write the shadow-zone map to this PNG file (cells lit only "
                                  "by rays guided by a duct hatched, for a non-monotone index)")
    p.add_argument("--min-focusing", type=float, default=shadow_study.MIN_FOCUSING,
                   help="non-monotone index: rays with an amplitude focusing factor below "
                        "this are not counted (default: %(default)g)")
    p.add_argument("--map-heights", type=int, default=None,
                   help="source heights in the --plot map (default: 400, or 100 for a "
                        "non-monotone index, whose map solves every cell)")
    p.set_defaults(func=_cmd_shadow)
    p = sub.add_parser("delays", help="D/R delays on a grid, or a distance from a delay")
    _profile_arg(p)
    p.add_argument("--antenna-z", type=float, required=True, help="antenna height [m]")
    p.add_argument("--source-z", default="-2000:-50:40", help="source heights START:STOP:COUNT [m]")
    p.add_argument("--distance", default="0:3000:61", help="distances START:STOP:COUNT [m]")
    p.add_argument("--plot", help="write delay contours to this PNG file")
    p.add_argument("--invert", type=float, help="measured delay [ns] to turn into a distance")
    p.add_argument("--at-z", type=float, help="source height [m] for --invert")
    p.set_defaults(func=_cmd_delays)
    p = sub.add_parser("table", help="build or inspect a lookup table")
    p.add_argument("action", choices=["build", "info"])
    p.add_argument("folder", help="table folder")
    _profile_arg(p)
    p.add_argument("--antenna-z", type=float, default=-100.0, help="antenna height [m]")
    p.add_argument("--source-z", default="-2000:0:201", help="source heights START:STOP:COUNT [m]")
    p.add_argument("--distance", default="0:3000:301", help="distances START:STOP:COUNT [m]")
    p.add_argument("--chunk", type=int, default=64, help="chunk edge in nodes")
    p.add_argument("--processes", type=int, default=0, help="local worker processes")
    p.add_argument("--scheduler", help="address of a dask scheduler to run the chunks on")
    p.add_argument("--max-rays", type=int, default=None,
                   help="keep at most this many rays per node, the earliest (default: every "
                        "ray; a duct in a non-monotone profile can give tens)")
    p.set_defaults(func=_cmd_table)
    p = sub.add_parser("vertex", help="predict pulses, fit a vertex, validate reconstructions")
    p.add_argument("action", choices=["predict", "fit", "validate"])
    p.add_argument("--station", default="tallow-dome-demo",
                   help="station name or YAML file (default: %(default)s)")
    p.add_argument("--profile", default=None,
                   help="profile name or YAML file (default: the station's profile)")
    p.add_argument("--vertex", help="predict: source position X,Y,Z [m]")
    p.add_argument("--emission-time", type=float, default=0.0, help="predict: [ns]")
    p.add_argument("--times", help="fit: CSV of antenna,time_ns,sigma_ns")
    p.add_argument("--csv", help="validate: CSV of true and fitted vertices")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.add_argument("--plot", help="write a figure (fit: timing residuals; validate: "
                                  "residuals and pulls) to this PNG file")
    p.set_defaults(func=_cmd_vertex)
    p = sub.add_parser("profile-fit", help="fit the firn profile to pulser D/R delays")
    p.add_argument("--station", default="tallow-dome-demo", help="station name or YAML file")
    _profile_arg(p)
    p.add_argument("--delays", required=True,
                   help="CSV of pulser_x_m,pulser_y_m,pulser_z_m,antenna,delay_ns,sigma_ns")
    p.add_argument("--free", default="n_surface,scale_depth",
                   help="parameters to fit, from n_deep,n_surface,scale_depth")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_cmd_profile_fit)
    p = sub.add_parser("budget", help="signal budget (path loss per frequency) of every ray")
    _profile_arg(p)
    p.add_argument("--source", required=True, help="source X,Z or X,Y,Z [m]")
    p.add_argument("--receiver", required=True, help="receiver X,Z or X,Y,Z [m]")
    p.add_argument("--freq", default="100,200,400", help="frequencies [MHz], comma-separated")
    p.add_argument("--attenuation-length", type=float, default=None,
                   help="constant field attenuation length [m] (default: Arrhenius model in "
                        "the invented demo ice column)")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_cmd_budget)
    p = sub.add_parser("profile", help="print a profile on a depth grid; fit or plot it")
    p.add_argument("name", metavar="NAME|FILE", help="bundled profile name or YAML file")
    p.add_argument("--depth", default="0:200:21",
                   help="depths START:STOP:COUNT [m], positive down (default: %(default)s)")
    p.add_argument("--fit", action="store_true",
                   help="least-squares exponential fit with uncertainties (to a table's own "
                        "samples, otherwise to the depth grid)")
    p.add_argument("--plot", help="write n against depth to this PNG file")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_cmd_profile)
    p = sub.add_parser("profiles", help="list the bundled profiles")
    p.set_defaults(func=_cmd_profiles)
    p = sub.add_parser("demo", help="tour of the bundled invented site and station: "
                                    "tables, figures and summaries")
    p.add_argument("--out", default="firnray-demo", metavar="DIR",
                   help="output folder for the figures, summary.md and summary.json "
                        "(default: %(default)s)")
    p.set_defaults(func=_cmd_demo)
    return parser


def _join_negative_values(argv):
    """Let '--source-z -2000:-1:8' mean '--source-z=-2000:-1:8' (argparse would
    take a value starting with '-' for an option)."""
    out = []
    i = 0
    while i < len(argv):
        tok = argv[i]
        if (tok.startswith("--") and "=" not in tok and i + 1 < len(argv)
                and argv[i + 1].startswith("-") and not argv[i + 1].startswith("--")
                and len(argv[i + 1]) > 1 and (argv[i + 1][1].isdigit() or argv[i + 1][1] == ".")):
            out.append(f"{tok}={argv[i + 1]}")
            i += 2
            continue
        out.append(tok)
        i += 1
    return out


def main(argv=None):
    """Run the command line; returns the exit code."""
    parser = build_parser()
    try:
        argv = sys.argv[1:] if argv is None else list(argv)
        args = parser.parse_args(_join_negative_values(argv))
        if args.command is None:
            parser.print_help()
            return 2
        return args.func(args)
    except UsageError as err:
        print(f"firnray: error: {err}", file=sys.stderr)
        return 2
    except BrokenPipeError:  # output piped into a reader that stopped (head, less)
        sys.stderr.close()
        return 0


if __name__ == "__main__":
    sys.exit(main())

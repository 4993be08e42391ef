"""Lookup tables of ray quantities on a (source height x distance) grid, on disk.

Format: a folder holding ``manifest.json`` (provenance: format and firnray
version, creation time, profile parameters and citation, antenna height,
grid, chunk layout, quantities, and a fingerprint of all of it) and
``chunks/<iz>_<ix>.npz``, one NumPy archive per chunk.  Each quantity is an
array (source height, distance, ray slot) with as many slots as the chunk's
node with most rays needs (at least 2, at most ``max_rays``): ducts in a
non-monotone profile give tens of rays, and a chunk cannot know how many the
others need; opening the table pads every chunk to the largest.  Format
version 1 (two slots everywhere, fewer quantities) is still read.  Each chunk carries
the fingerprint and its own position, and is written to a temporary name in
the same folder and then renamed, so a chunk file is either complete or
absent: several writers can fill one table at once, a run killed at any
moment loses only the chunks in flight, and re-running the same build skips
the finished chunks.  This needs nothing beyond NumPy to read (an argument
for it over zarr, whose on-disk layout would add a dependency for the same
guarantees).
"""

import datetime as _dt
import hashlib
import json
import math
import os
import tempfile

import numba
import numpy as np

from firnray.checks import finite_float
from firnray.medium.general_profiles import PanelProfile
from firnray.medium.profiles import ExponentialProfile
from firnray.rays import exponential_kernels as ek
from firnray.rays.solve import check_profile, find_rays_many
from firnray.studies.execution import chunk_slices, run_tasks
from firnray.studies.grid import rays_to_antenna
from firnray.version import __version__

FORMAT = "firnray-lookup-table"
VERSION = 2
#: Format versions :func:`open_table` reads.
READABLE_VERSIONS = (1, 2)
#: Float quantities of format version 1 (two ray slots).
FLOAT_QUANTITIES_V1 = ("travel_time", "path_length", "launch_zenith", "arrival_zenith",
                       "invariant", "turning_z")
#: Float quantities of the current format.
FLOAT_QUANTITIES = FLOAT_QUANTITIES_V1 + ("lower_turning_z", "turning_points",
                                          "surface_reflections", "equivalent_distance")
#: Ray slots of a format version 1 table, and the fewest a chunk keeps.
MIN_SLOTS = 2
#: Largest number of slots a table can keep (the most rays the solver keeps per pair).
MAX_RAYS = 64
UNITS = {"travel_time": "ns", "path_length": "m", "launch_zenith": "deg",
         "arrival_zenith": "deg", "invariant": "1", "turning_z": "m", "lower_turning_z": "m",
         "turning_points": "1", "surface_reflections": "1", "equivalent_distance": "m",
         "distance": "m", "source_z": "m", "antenna_z": "m"}


class TableError(ValueError):
    """A lookup-table folder is missing, incomplete, corrupted or not a firnray table."""


def _uniform_axis(name, values):
    arr = np.asarray(values, dtype=float).reshape(-1)
    if arr.size < 2 or not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must be at least 2 finite values, got {values!r}")
    step = (arr[-1] - arr[0]) / (arr.size - 1)
    if step <= 0 or not np.allclose(np.diff(arr), step, rtol=1e-9, atol=1e-9 * abs(step)):
        raise ValueError(f"{name} must be evenly spaced and increasing (use numpy.linspace), "
                         f"got {arr[:4]!r}...")
    return {"start": float(arr[0]), "step": float(step), "count": int(arr.size)}


def _axis_values(axis):
    return axis["start"] + axis["step"] * np.arange(axis["count"])


def _profile_record(profile):
    """The profile as JSON: its parameters (exponential) or its panel stack (any other)."""
    if isinstance(profile, ExponentialProfile):
        return {"kind": "exponential", "n_deep": profile.n_deep,
                "n_surface": profile.n_surface, "scale_depth": profile.scale_depth,
                "n_air": profile.n_air, "z_min": profile.z_min, "info": profile.info}
    stack = profile.panels
    return {"kind": "panels", "class": type(profile).__name__, "top": stack.top.tolist(),
            "panel_kind": stack.kind.tolist(), "coef": stack.coef.tolist(),
            "n_air": profile.n_air, "z_min": profile.z_min, "info": profile.info}


def _profile_from_record(p):
    """Rebuild the profile of a table record (``_profile_record``)."""
    if p["kind"] == "exponential":
        return ExponentialProfile(p["n_deep"], p["n_surface"], p["scale_depth"],
                                  n_air=p["n_air"], z_min=p["z_min"], info=p.get("info"))
    return PanelProfile(p["top"], p["panel_kind"], p["coef"], n_air=p["n_air"],
                        z_min=p["z_min"], info=p.get("info"))


def _fingerprint(record):
    keys = ("format", "version", "profile", "antenna_z", "grid", "chunk_shape", "quantities")
    if record.get("version") != 1:
        keys += ("max_rays",)
    core = {k: record[k] for k in keys}
    core["profile"] = {k: v for k, v in core["profile"].items() if k != "info"}
    text = json.dumps(core, sort_keys=True, separators=(",", ":"))
    return hashlib.sha256(text.encode()).hexdigest()


def compute_chunk(task):
    """Ray quantities on one chunk of the grid (a pure function of plain data).

    Parameters
    ----------
    task : dict
        ``profile`` (the record of ``_profile_record``), ``antenna_z`` [m],
        ``distance`` [m] and ``source_z`` [m] (1-D arrays of the chunk),
        ``max_rays`` (most slots kept, or None for the table's limit of 64),
        ``workers`` (threads, or None).

    Returns
    -------
    dict of ndarray
        One (nz, nx, K) array per float quantity and ``kind`` (int8), with K
        slots (the most rays of any node of the chunk, at least 2, at most
        ``max_rays``), and ``count`` (int16, (nz, nx): every ray the solver
        found, also those beyond K).
    """
    prof = _profile_from_record(task["profile"])
    x = np.asarray(task["distance"], float)
    z = np.asarray(task["source_z"], float)
    rs = rays_to_antenna(prof, task["antenna_z"], x, z, task.get("workers"))
    cap = task.get("max_rays") or MAX_RAYS
    n = len(x) * len(z)
    most = int(rs.count.max()) if rs.count.size else 0
    k = min(max(MIN_SLOTS, most), cap)
    out = {}
    for q in FLOAT_QUANTITIES:
        arr = np.full((n, k), np.nan)
        vals = getattr(rs, q)
        m = min(vals.shape[1], k)
        arr[:, :m] = vals[:, :m]
        out[q] = arr.reshape(len(z), len(x), k)
    kinds = np.full((n, k), -1, np.int8)
    m = min(rs.kind.shape[1], k)
    kinds[:, :m] = rs.kind[:, :m]
    out["kind"] = kinds.reshape(len(z), len(x), k)
    out["count"] = rs.count.astype(np.int16).reshape(len(z), len(x))
    return out


def _chunk_name(iz, ix):
    return f"{iz}_{ix}.npz"


def _write_chunk(folder, iz, ix, fingerprint, arrays):
    tmp = tempfile.NamedTemporaryFile(dir=folder, prefix=".tmp-", suffix=".npz", delete=False)
    try:
        with tmp:
            np.savez(tmp, fingerprint=np.array(fingerprint), index=np.array([iz, ix]), **arrays)
        os.replace(tmp.name, os.path.join(folder, _chunk_name(iz, ix)))
    except BaseException:
        if os.path.exists(tmp.name):
            os.unlink(tmp.name)
        raise


def _quantities(record):
    """Float quantities stored in a table of this record's format version."""
    return FLOAT_QUANTITIES_V1 if record["version"] == 1 else FLOAT_QUANTITIES


def _slot_limit(record):
    """Most ray slots a chunk of this table may hold."""
    if record["version"] == 1:
        return MIN_SLOTS
    return record.get("max_rays") or MAX_RAYS


def _read_chunk(path, record, iz, ix, shape):
    quantities = _quantities(record)
    try:
        with np.load(path) as data:
            if str(data["fingerprint"]) != record["fingerprint"] or list(data["index"]) != [iz, ix]:
                raise TableError(f"{path}: chunk belongs to another table (fingerprint or "
                                 f"position differs); delete it and rerun the build")
            arrays = {k: data[k] for k in quantities + ("kind", "count")}
    except TableError:
        raise
    except Exception as err:
        raise TableError(f"{path}: corrupted chunk file ({type(err).__name__}: {err}); "
                         f"delete it and rerun the build to recompute it") from None
    slots = arrays["kind"].shape[-1] if arrays["kind"].ndim == 3 else -1
    limit = _slot_limit(record)
    fewest = min(MIN_SLOTS, limit)
    if not fewest <= slots <= limit:
        want = f"{limit}" if fewest == limit else f"{fewest} to {limit}"
        raise TableError(f"{path}: array 'kind' has {slots} ray slots, expected {want}")
    for k, v in arrays.items():
        want = shape if k == "count" else shape + (slots,)
        if v.shape != want:
            raise TableError(f"{path}: array '{k}' has shape {v.shape}, expected {want}")
    return arrays


def _read_manifest(folder):
    path = os.path.join(folder, "manifest.json")
    if not os.path.isfile(path):
        raise TableError(f"{folder}: not a firnray lookup table (no manifest.json)")
    try:
        with open(path, encoding="utf-8") as fh:
            record = json.load(fh)
    except (OSError, ValueError) as err:
        raise TableError(f"{path}: unreadable manifest ({err})") from None
    if not isinstance(record, dict) or record.get("format") != FORMAT:
        raise TableError(f"{path}: not a firnray lookup table (format is "
                         f"{record.get('format') if isinstance(record, dict) else record!r}, "
                         f"expected {FORMAT!r})")
    if record.get("version") not in READABLE_VERSIONS:
        raise TableError(f"{path}: table format version {record.get('version')!r}, "
                         f"this firnray reads versions "
                         f"{', '.join(str(v) for v in READABLE_VERSIONS)}")
    if record.get("fingerprint") != _fingerprint(record):
        raise TableError(f"{path}: manifest fingerprint does not match its contents "
                         f"(edited or corrupted)")
    return record


def _chunk_tasks(record):
    x = _axis_values(record["grid"]["distance"])
    z = _axis_values(record["grid"]["source_z"])
    cz, cx = record["chunk_shape"]
    prof = {k: v for k, v in record["profile"].items() if k != "info"}
    tasks = []
    for iz, sz in enumerate(chunk_slices(len(z), cz)):
        for ix, sx in enumerate(chunk_slices(len(x), cx)):
            tasks.append(((iz, ix, sz, sx), {"profile": prof, "antenna_z": record["antenna_z"],
                                             "distance": x[sx], "source_z": z[sz]}))
    return tasks


def build_table(profile, antenna_z, distance, source_z, folder, chunk_shape=(64, 64),
                executor=None, max_workers=None, progress=False, on_chunk=None, max_rays=None):
    """Compute (or finish) a lookup table and write it to ``folder``.

    Every ray of every node is kept, in time order, in as many slots as the
    node with most rays needs (at least 2; a duct in a non-monotone profile
    can give tens), unless ``max_rays`` caps them; ``count`` always holds
    the number of rays found.

    Parameters
    ----------
    profile : IndexProfile
        The index profile (any kind; a non-monotone one too).
    antenna_z : float
        Antenna height [m].
    distance : array_like
        Evenly spaced horizontal distances from the antenna [m].
    source_z : array_like
        Evenly spaced source heights [m].
    folder : str or os.PathLike
        Table folder; created if missing.  If it already holds the same
        table (same fingerprint), finished chunks are kept and only the
        missing ones computed; a different table there is refused.
    chunk_shape : (int, int), optional
        Chunk size (source heights, distances).
    executor : None, "processes" or concurrent.futures.Executor, optional
        Where chunks run (see ``firnray.studies.execution.run_tasks``); a dask
        cluster: ``distributed.Client(...).get_executor()``.
    max_workers : int, optional
        Size of the local process pool for ``executor="processes"``.
    progress : bool, optional
        Show a tqdm progress bar of chunks done (on stderr).
    on_chunk : callable, optional
        Called with (iz, ix) after each chunk is on disk.
    max_rays : int, optional
        Keep at most this many rays per node (1 to 64), the earliest; None
        (default) keeps every ray (the solver keeps at most 64 per pair).

    Returns
    -------
    LookupTable
        The finished table, opened.
    """
    check_profile(profile)
    antenna_z = finite_float("antenna_z", antenna_z)
    profile.check_height("antenna", antenna_z)
    if (not isinstance(chunk_shape, (tuple, list)) or len(chunk_shape) != 2
            or not all(isinstance(c, (int, np.integer)) and c >= 1 for c in chunk_shape)):
        raise ValueError(f"chunk_shape must be two integers >= 1, got {chunk_shape!r}")
    if max_rays is not None and (not isinstance(max_rays, (int, np.integer))
                                 or isinstance(max_rays, bool) or not 1 <= max_rays <= MAX_RAYS):
        raise ValueError(f"max_rays must be None or an integer from 1 to {MAX_RAYS}, "
                         f"got {max_rays!r}")
    record = {"format": FORMAT, "version": VERSION, "firnray_version": __version__,
              "created_utc": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
              "profile": _profile_record(profile), "antenna_z": antenna_z,
              "grid": {"distance": _uniform_axis("distance", distance),
                       "source_z": _uniform_axis("source_z", source_z)},
              "chunk_shape": [int(c) for c in chunk_shape],
              "quantities": list(FLOAT_QUANTITIES) + ["kind", "count"],
              "max_rays": None if max_rays is None else int(max_rays),
              "units": dict(UNITS)}
    if np.min(_axis_values(record["grid"]["source_z"])) < profile.z_min:
        raise ValueError(f"source_z reaches below the profile's valid range "
                         f"(z >= {profile.z_min} m)")
    if np.min(_axis_values(record["grid"]["distance"])) < 0:
        raise ValueError("distance must be >= 0 m")
    record["fingerprint"] = _fingerprint(record)
    folder = os.fspath(folder)
    chunks = os.path.join(folder, "chunks")
    os.makedirs(chunks, exist_ok=True)
    manifest = os.path.join(folder, "manifest.json")
    if os.path.exists(manifest):
        old = _read_manifest(folder)
        if old["version"] != record["version"]:
            raise TableError(f"{folder}: holds a table in format version {old['version']}, "
                             f"this firnray writes version {record['version']}; open it with "
                             f"open_table, or build into another folder")
        if old["fingerprint"] != record["fingerprint"]:
            raise TableError(f"{folder}: holds a different table (profile, antenna, grid or "
                             f"chunks differ); choose another folder or delete it")
        record = old
    else:
        tmp = manifest + ".tmp"
        with open(tmp, "w", encoding="utf-8") as fh:
            json.dump(record, fh, indent=1, sort_keys=True)
        os.replace(tmp, manifest)
    pending = []
    all_tasks = _chunk_tasks(record)
    for (iz, ix, sz, sx), task in all_tasks:
        if not os.path.exists(os.path.join(chunks, _chunk_name(iz, ix))):
            task["workers"] = None if executor is None else 1
            task["max_rays"] = record.get("max_rays")
            pending.append(((iz, ix), task))
    total = len(all_tasks)
    bar = None
    if progress:
        from tqdm import tqdm
        bar = tqdm(total=total, initial=total - len(pending), unit="chunk",
                   desc="lookup table")
    try:
        for (iz, ix), arrays in run_tasks(compute_chunk, pending, executor, max_workers):
            _write_chunk(chunks, iz, ix, record["fingerprint"], arrays)
            if bar is not None:
                bar.update(1)
            if on_chunk is not None:
                on_chunk(iz, ix)
    finally:
        if bar is not None:
            bar.close()
    return open_table(folder)


@numba.njit(parallel=True, **ek.KERNEL_OPTIONS)
def bilinear(values, x0, dx, nx, z0, dz, nz, x, z, out):
    """Bilinear interpolation on a regular grid; NaN outside it or next to a NaN node.

    Parameters
    ----------
    values : ndarray, shape (nz, nx)
    x0, dx, z0, dz : float
        First node and spacing of each axis [m].
    nx, nz : int
        Number of nodes.
    x, z : ndarray, shape (N,)
        Query points [m].
    out : ndarray, shape (N,)
        Receives the interpolated values.
    """
    for i in numba.prange(x.shape[0]):
        fx = (x[i] - x0) / dx
        fz = (z[i] - z0) / dz
        if not (fx >= 0.0 and fx <= nx - 1 and fz >= 0.0 and fz <= nz - 1):
            out[i] = math.nan
            continue
        ix = min(int(fx), nx - 2)
        iz = min(int(fz), nz - 2)
        tx = fx - ix
        tz = fz - iz
        acc = 0.0
        for dz_ in range(2):
            wz = tz if dz_ == 1 else 1.0 - tz
            if wz == 0.0:
                continue  # on a node line: the other row does not matter (may be NaN)
            for dx_ in range(2):
                wx = tx if dx_ == 1 else 1.0 - tx
                if wx != 0.0:
                    acc += wz * wx * values[iz + dz_, ix + dx_]
        out[i] = acc


class LookupTable:
    """An opened lookup table.

    Attributes
    ----------
    folder : str
        Where the table lies on disk.
    distance, source_z : ndarray
        Grid axes [m].
    antenna_z : float
        Antenna height [m].
    profile : IndexProfile
        The profile the table was built with.
    provenance : dict
        The manifest (format and firnray version, creation time, profile and
        its citation, grid, chunk layout, units).
    quantities : tuple of str
        The float quantities stored (a format version 1 table lacks
        ``lower_turning_z``, ``turning_points``, ``surface_reflections`` and
        ``equivalent_distance``).
    slots : int
        Ray slots K per node [1]: the most rays of any node (at least 2, at
        most the build's ``max_rays``); 2 in a format version 1 table.
    data : dict of ndarray
        Every quantity on the grid: (nz, nx, K) floats in time order (NaN
        where a node has fewer rays), ``kind`` (nz, nx, K), ``count`` (nz, nx).
    """

    def __init__(self, record, data, folder=None):
        self.folder = folder
        self.provenance = record
        self.distance = _axis_values(record["grid"]["distance"])
        self.source_z = _axis_values(record["grid"]["source_z"])
        self.antenna_z = record["antenna_z"]
        self.profile = _profile_from_record(record["profile"])
        self.quantities = _quantities(record)
        self.data = data
        self.slots = int(data["kind"].shape[2])
        self._contiguous = {}

    def _plane(self, quantity, ray):
        if quantity not in self.quantities:
            raise ValueError(f"quantity must be one of {self.quantities} (stored in this "
                             f"table), got {quantity!r}")
        if not isinstance(ray, (int, np.integer)) or isinstance(ray, bool) or not (
                0 <= ray < self.slots):
            raise ValueError(f"ray must be an integer from 0 (first arrival) to "
                             f"{self.slots - 1} (the table's last ray slot), got {ray!r}")
        key = (quantity, ray)
        if key not in self._contiguous:
            self._contiguous[key] = np.ascontiguousarray(self.data[quantity][:, :, ray])
        return self._contiguous[key]

    def interpolate(self, distance, source_z, quantity="travel_time", ray=0):
        """Bilinear interpolation of one quantity of the first (ray=0), second, ... ray.

        Slots are in time order at each node: where the number of rays
        changes between nodes (near a shadow boundary, or where a duct adds
        rays) slot k is a different ray at neighbouring nodes and the
        interpolated value mixes them.

        Parameters
        ----------
        distance, source_z : float or array_like
            Query points: horizontal distance from the antenna [m] and source
            height [m] (broadcast together).
        quantity : str
            One of ``travel_time`` [ns], ``path_length`` [m],
            ``launch_zenith`` [deg], ``arrival_zenith`` [deg], ``invariant``
            [1], ``turning_z`` [m], and (format version 2)
            ``lower_turning_z`` [m], ``turning_points`` [1],
            ``surface_reflections`` [1], ``equivalent_distance`` [m].
        ray : int
            Slot: 0 for the first arrival, 1 for the second, up to
            ``slots - 1``.

        Returns
        -------
        float or ndarray
            NaN outside the grid or in a cell next to a node without that ray
            (near the shadow boundary).
        """
        plane = self._plane(quantity, ray)
        x, z = np.broadcast_arrays(np.asarray(distance, float), np.asarray(source_z, float))
        shape = x.shape
        xf = np.ascontiguousarray(x.reshape(-1))
        zf = np.ascontiguousarray(z.reshape(-1))
        out = np.empty(xf.shape)
        g = self.provenance["grid"]
        bilinear(plane, g["distance"]["start"], g["distance"]["step"], g["distance"]["count"],
                 g["source_z"]["start"], g["source_z"]["step"], g["source_z"]["count"],
                 xf, zf, out)
        out = out.reshape(shape)
        return float(out) if out.ndim == 0 else out

    def interpolation_error(self, n_points=2000, seed=0, quantities=("travel_time",)):
        """Measured interpolation error against the exact solver between the nodes.

        Draws ``n_points`` random points inside grid cells (seeded), solves
        them exactly and compares, per quantity and ray slot, where both give
        a value.

        Returns
        -------
        dict
            ``{(quantity, ray): {"max", "p99", "median", "points"}}`` in
            the quantity's unit, plus ``"missing"``: the fraction of points
            where the exact solver has a ray the table cannot interpolate.
        """
        rng = np.random.default_rng(seed)
        x = rng.uniform(self.distance[0], self.distance[-1], n_points)
        z = rng.uniform(self.source_z[0], self.source_z[-1], n_points)
        exact = find_rays_many(self.profile, np.column_stack([np.zeros(n_points), z]),
                               np.column_stack([x, np.full(n_points, self.antenna_z)]))
        report = {}
        missing = 0
        for q in quantities:
            for ray in range(self.slots):
                got = self.interpolate(x, z, q, ray)
                if exact.travel_time.shape[1] <= ray:
                    continue
                want = getattr(exact, q)[:, ray]
                both = np.isfinite(got) & np.isfinite(want)
                missing = max(missing, int(np.sum(np.isfinite(want) & ~np.isfinite(got))))
                err = np.abs(got[both] - want[both])
                report[(q, ray)] = {
                    "max": float(err.max()) if err.size else math.nan,
                    "p99": float(np.percentile(err, 99)) if err.size else math.nan,
                    "median": float(np.median(err)) if err.size else math.nan,
                    "points": int(both.sum())}
        report["missing"] = missing / n_points
        return report


def open_table(folder):
    """Open a lookup table folder written by :func:`build_table`.

    Raises
    ------
    TableError
        (a ``ValueError``) if the folder is not a firnray table, its manifest
        was edited, a chunk is missing, belongs to another table or is
        corrupted; the message names the file.
    """
    folder = os.fspath(folder)
    record = _read_manifest(folder)
    nz = record["grid"]["source_z"]["count"]
    nx = record["grid"]["distance"]["count"]
    chunks = []
    missing = []
    for (iz, ix, sz, sx), _ in _chunk_tasks(record):
        path = os.path.join(folder, "chunks", _chunk_name(iz, ix))
        if not os.path.exists(path):
            missing.append(_chunk_name(iz, ix))
            continue
        shape = (sz.stop - sz.start, sx.stop - sx.start)
        chunks.append((sz, sx, _read_chunk(path, record, iz, ix, shape)))
    if missing:
        raise TableError(f"{folder}: incomplete table, {len(missing)} chunk(s) missing "
                         f"(first: {missing[0]}); rerun the same build to finish it")
    slots = max([c[2]["kind"].shape[2] for c in chunks] + [min(MIN_SLOTS, _slot_limit(record))])
    data = {q: np.full((nz, nx, slots), np.nan) for q in _quantities(record)}
    data["kind"] = np.full((nz, nx, slots), -1, np.int8)
    data["count"] = np.zeros((nz, nx), np.int16)
    for sz, sx, arrays in chunks:
        for k, v in arrays.items():
            if k == "count":
                data[k][sz, sx] = v
            else:
                data[k][sz, sx, :v.shape[2]] = v
    return LookupTable(record, data, folder)

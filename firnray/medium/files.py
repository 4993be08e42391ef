"""Profile files: our YAML format, and the catalogue of bundled profiles.

Format (``docs/formats.md``)::

    firnray_profile: 1              # format version
    name: demo-dry-firn             # short identifier
    description: free text
    kind: exponential               # the profile kind
    parameters:                     # unit in each key's suffix ("_m" metres)
      n_deep: 1.78
      n_surface: 1.35
      scale_depth_m: 40.0
      n_air: 1.0                    # optional, default 1.0
    valid_range_m: [-3000.0, 0.0]   # lowest and highest height of the fit [m]
    source:                         # where the numbers come from
      citation: "Authors (year), Journal volume(issue), pages"
      doi: "10.xxxx/..."            # optional
      note: free text               # optional

Every key is checked; an error names the file, the key and what was expected.
"""

import os
from importlib import resources

import yaml

from firnray.errors import ProfileFileError
from firnray.medium.firn_density import herron_langway_profile, index_profile_from_density
from firnray.medium.general_profiles import (PiecewiseExponentialProfile, SampleError,
                                             TabulatedProfile)
from firnray.medium.profiles import ExponentialProfile

FORMAT_VERSION = 1
DEFAULT_PROFILE = "demo-dry-firn"

_TOP_KEYS = {"firnray_profile", "name", "description", "kind", "parameters",
             "valid_range_m", "source"}
_SOURCE_KEYS = {"citation", "doi", "note"}
#: kind -> (required parameters, optional parameters)
_KIND_PARAMETERS = {
    "exponential": ({"n_deep", "n_surface", "scale_depth_m"}, {"n_air"}),
    "piecewise_exponential": ({"n_surface", "breaks_m", "n_deep", "scale_depth_m"}, {"n_air"}),
    "index_table": (set(), {"csv", "depth_m", "n", "n_air", "extend_to_surface",
                            "smoothing_window_m"}),
    "density_table": (set(), {"csv", "depth_m", "density_kg_m3", "relation",
                              "ice_permittivity", "n_air", "extend_to_surface",
                              "smoothing_window_m"}),
    "densification": ({"model", "temperature_c", "accumulation_m_we_per_yr",
                       "surface_density_kg_m3"},
                      {"ice_density_kg_m3", "bottom_depth_m", "spacing_m", "relation", "n_air"}),
}
_RELATIONS = ("kovacs", "looyenga")
_DENSIFICATION_MODELS = ("herron_langway",)


def bundled_profile_dir():
    """Folder holding the bundled profile files."""
    return str(resources.files("firnray") / "data" / "profiles")


def bundled_profiles():
    """Names of the bundled profiles (file names without ``.yaml``), sorted."""
    folder = bundled_profile_dir()
    return sorted(f[:-5] for f in os.listdir(folder) if f.endswith(".yaml"))


def _fail(path, key, message):
    raise ProfileFileError(f"{path}: key '{key}': {message}")


def _number(path, key, value):
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        _fail(path, key, f"expected a number, got {value!r}")
    return float(value)


def profile_from_mapping(data, path="<mapping>"):
    """Build a profile from the parsed YAML mapping ``data`` (``path`` names it in errors)."""
    if not isinstance(data, dict):
        raise ProfileFileError(f"{path}: expected a mapping at the top level, "
                               f"got {type(data).__name__}")
    unknown = set(data) - _TOP_KEYS
    if unknown:
        _fail(path, sorted(unknown)[0], f"unknown key; allowed keys are {sorted(_TOP_KEYS)}")
    for key in ("firnray_profile", "name", "kind", "parameters"):
        if key not in data:
            _fail(path, key, "missing")
    if data["firnray_profile"] != FORMAT_VERSION:
        _fail(path, "firnray_profile", f"expected format version {FORMAT_VERSION}, "
                                       f"got {data['firnray_profile']!r}")
    for key in ("name", "description"):
        if key in data and not isinstance(data[key], str):
            _fail(path, key, f"expected text, got {data[key]!r}")
    kind = data["kind"]
    if kind not in _KIND_PARAMETERS:
        _fail(path, "kind", f"expected one of {sorted(_KIND_PARAMETERS)}, got {kind!r}")
    params = data["parameters"]
    if not isinstance(params, dict):
        _fail(path, "parameters", f"expected a mapping, got {params!r}")
    required, optional = _KIND_PARAMETERS[kind]
    for key in sorted(set(params) - required - optional):
        _fail(path, f"parameters.{key}", f"unknown parameter for kind '{kind}'; "
                                         f"allowed: {sorted(required | optional)}")
    for key in sorted(required - set(params)):
        _fail(path, f"parameters.{key}", "missing")
    z_min = None
    if "valid_range_m" in data:
        rng = data["valid_range_m"]
        if (not isinstance(rng, list) or len(rng) != 2):
            _fail(path, "valid_range_m", f"expected [lowest, highest] heights in m, got {rng!r}")
        lo = _number(path, "valid_range_m", rng[0])
        hi = _number(path, "valid_range_m", rng[1])
        if not lo < hi:
            _fail(path, "valid_range_m", f"expected lowest < highest, got {rng!r}")
        z_min = lo
    source = data.get("source", {})
    if not isinstance(source, dict):
        _fail(path, "source", f"expected a mapping, got {source!r}")
    for key in sorted(set(source) - _SOURCE_KEYS):
        _fail(path, f"source.{key}", f"unknown key; allowed: {sorted(_SOURCE_KEYS)}")
    info = {"name": data["name"], "description": data.get("description", ""),
            "source": dict(source), "file": str(path)}
    kwargs = {"info": info}
    if z_min is not None:
        kwargs["z_min"] = z_min
    if "n_air" in params:
        kwargs["n_air"] = _number(path, "parameters.n_air", params["n_air"])
    try:
        return _BUILDERS[kind](path, params, kwargs)
    except ProfileFileError:
        raise
    except ValueError as err:
        raise ProfileFileError(f"{path}: key 'parameters': {err}") from None


def _numbers(path, key, value, allow_scalar=False):
    """A list of numbers (or, with ``allow_scalar``, one number) from YAML."""
    if allow_scalar and not isinstance(value, list):
        return _number(path, key, value)
    if not isinstance(value, list):
        _fail(path, key, f"expected a list of numbers, got {value!r}")
    return [_number(path, f"{key}[{i}]", v) for i, v in enumerate(value)]


def _choice(path, key, value, choices):
    if value not in choices:
        _fail(path, key, f"expected one of {list(choices)}, got {value!r}")
    return value


def read_table_csv(path, columns, line_numbers=False):
    """Read numeric columns from a CSV file with a header row ('#' lines are comments).

    Parameters
    ----------
    path : str
        CSV file.
    columns : sequence of str
        Header names to return, in this order.
    line_numbers : bool, optional
        Also return the line number (from 1) of each data row.

    Returns
    -------
    list of ndarray
        One float array per column, then (with ``line_numbers``) an int array
        of the line numbers.

    Raises
    ------
    ProfileFileError
        If the file is missing, a column is absent or a value is not a number;
        the message names the file, the line and the column.
    """
    import csv

    import numpy as np

    try:
        with open(path, encoding="utf-8", newline="") as fh:
            lines = [(i + 1, line) for i, line in enumerate(fh)
                     if line.strip() and not line.lstrip().startswith("#")]
    except OSError as err:
        raise ProfileFileError(f"{path}: cannot read the table: {err.strerror}") from None
    if not lines:
        raise ProfileFileError(f"{path}: the table is empty")
    rows = list(csv.reader([line for _, line in lines]))
    header = [h.strip() for h in rows[0]]
    missing = [c for c in columns if c not in header]
    if missing:
        raise ProfileFileError(f"{path}: line {lines[0][0]}: column '{missing[0]}' missing; "
                               f"the header has {header}")
    idx = [header.index(c) for c in columns]
    out = [[] for _ in columns]
    for (lineno, _), row in zip(lines[1:], rows[1:]):
        for j, (c, k) in enumerate(zip(columns, idx)):
            try:
                out[j].append(float(row[k]))
            except (ValueError, IndexError):
                raise ProfileFileError(f"{path}: line {lineno}: column '{c}': expected a "
                                       f"number, got {row[k] if k < len(row) else ''!r}") from None
    arrays = [np.array(v) for v in out]
    if line_numbers:
        arrays.append(np.array([lineno for lineno, _ in lines[1:]], dtype=int))
    return arrays


def _table(path, params, names):
    """Columns ``names`` from ``parameters.csv`` (relative to the YAML file) or inline lists.

    Returns the columns and the CSV path and line numbers of the rows (None, None inline).
    """
    import numpy as np

    if "csv" in params:
        for key in names:
            if key in params:
                _fail(path, f"parameters.{key}", "give the table either inline or as 'csv', "
                                                 "not both")
        rel = params["csv"]
        if not isinstance(rel, str):
            _fail(path, "parameters.csv", f"expected a file path, got {rel!r}")
        csv_path = os.path.join(os.path.dirname(os.fspath(path)), rel)
        try:
            *cols, lines = read_table_csv(csv_path, names, line_numbers=True)
        except ProfileFileError as err:
            raise ProfileFileError(f"{path}: key 'parameters.csv': {err}") from None
        return cols, csv_path, lines
    for key in names:
        if key not in params:
            _fail(path, f"parameters.{key}", "missing (or give 'csv')")
    cols = [np.array(_numbers(path, f"parameters.{k}", params[k])) for k in names]
    if len({c.size for c in cols}) != 1:
        _fail(path, f"parameters.{names[1]}", f"expected as many values as "
                                              f"parameters.{names[0]} ({cols[0].size})")
    return cols, None, None


def _table_options(path, params):
    """Keywords from the optional table keys ``extend_to_surface`` and ``smoothing_window_m``."""
    out = {}
    if "extend_to_surface" in params:
        flag = params["extend_to_surface"]
        if not isinstance(flag, bool):
            _fail(path, "parameters.extend_to_surface", f"expected true or false, got {flag!r}")
        out["extend_to_surface"] = flag
    if "smoothing_window_m" in params:
        window = _number(path, "parameters.smoothing_window_m", params["smoothing_window_m"])
        if not window > 0.0 or window == float("inf"):
            _fail(path, "parameters.smoothing_window_m",
                  f"expected a finite window width > 0 m, got {params['smoothing_window_m']!r}")
        out["smoothing_window"] = window
    return out


def _build_table_profile(path, names, csv_path, lines, build):
    """Call ``build()``; turn a refused sample into an error naming the file, key and row."""
    try:
        return build()
    except SampleError as err:
        column = {"z": "depth_m"}.get(err.argument, names[1])
        message = str(err).replace("pass extend_to_surface=True",
                                   "set parameters.extend_to_surface: true")
        row = err.rows[-1] if len(err.rows) in (1, 2) else None
        if csv_path is not None:
            where = f"line {lines[row]}: " if row is not None else ""
            raise ProfileFileError(f"{path}: key 'parameters.csv': {csv_path}: {where}"
                                   f"column '{column}': {message}") from None
        key = f"parameters.{column}" + (f"[{row}]" if row is not None else "")
        raise ProfileFileError(f"{path}: key '{key}': {message}") from None


def _build_exponential(path, params, kwargs):
    values = {k: _number(path, f"parameters.{k}", params[k])
              for k in ("n_deep", "n_surface", "scale_depth_m")}
    return ExponentialProfile(values["n_deep"], values["n_surface"], values["scale_depth_m"],
                              **kwargs)


def _build_piecewise(path, params, kwargs):
    return PiecewiseExponentialProfile(
        _number(path, "parameters.n_surface", params["n_surface"]),
        _numbers(path, "parameters.breaks_m", params["breaks_m"]),
        _numbers(path, "parameters.n_deep", params["n_deep"], allow_scalar=True),
        _numbers(path, "parameters.scale_depth_m", params["scale_depth_m"], allow_scalar=True),
        **kwargs)


def _build_index_table(path, params, kwargs):
    names = ("depth_m", "n")
    (depth, n), csv_path, lines = _table(path, params, names)
    options = _table_options(path, params)
    return _build_table_profile(path, names, csv_path, lines,
                                lambda: TabulatedProfile(-depth, n, **options, **kwargs))


def _build_density_table(path, params, kwargs):
    names = ("depth_m", "density_kg_m3")
    (depth, rho), csv_path, lines = _table(path, params, names)
    options = _table_options(path, params)
    relation = _choice(path, "parameters.relation", params.get("relation", "kovacs"), _RELATIONS)
    extra = {}
    if "ice_permittivity" in params:
        if relation != "looyenga":
            _fail(path, "parameters.ice_permittivity", "only used with relation 'looyenga'")
        extra["ice_permittivity"] = _number(path, "parameters.ice_permittivity",
                                            params["ice_permittivity"])
    return _build_table_profile(
        path, names, csv_path, lines,
        lambda: index_profile_from_density(-depth, rho, relation=relation, **extra, **options,
                                           **kwargs))


def _build_densification(path, params, kwargs):
    _choice(path, "parameters.model", params["model"], _DENSIFICATION_MODELS)
    num = {k: _number(path, f"parameters.{k}", params[k]) for k in params
           if k not in ("model", "relation", "n_air")}
    relation = _choice(path, "parameters.relation", params.get("relation", "kovacs"), _RELATIONS)
    extra = {}
    if "ice_density_kg_m3" in num:
        extra["ice_density"] = num["ice_density_kg_m3"]
    return herron_langway_profile(num["temperature_c"], num["accumulation_m_we_per_yr"],
                                  num["surface_density_kg_m3"],
                                  z_bottom=-num.get("bottom_depth_m", 200.0),
                                  spacing=num.get("spacing_m", 0.5), relation=relation,
                                  **extra, **kwargs)


_BUILDERS = {"exponential": _build_exponential, "piecewise_exponential": _build_piecewise,
             "index_table": _build_index_table, "density_table": _build_density_table,
             "densification": _build_densification}


def load_profile(name_or_path=DEFAULT_PROFILE):
    """Load a profile from a YAML file or by the name of a bundled profile.

    Parameters
    ----------
    name_or_path : str or os.PathLike
        A bundled profile name (see :func:`bundled_profiles`) or the path of
        a YAML file in the firnray profile format.

    Returns
    -------
    IndexProfile

    Raises
    ------
    ValueError
        (``ProfileFileError``) if the file is missing, is not valid YAML, or a
        key is missing, unknown or out of range; the message names the file
        and the key.
    """
    text = os.fspath(name_or_path)
    path = text
    if not os.path.exists(path):
        candidate = os.path.join(bundled_profile_dir(), text + ".yaml")
        if os.path.exists(candidate):
            path = candidate
        else:
            raise ProfileFileError(f"{text}: no such file and no bundled profile of that "
                                   f"name; bundled: {', '.join(bundled_profiles())}")
    try:
        with open(path, encoding="utf-8") as fh:
            data = yaml.safe_load(fh)
    except yaml.YAMLError as err:
        raise ProfileFileError(f"{path}: not valid YAML: {err}") from None
    return profile_from_mapping(data, path)

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
from firnray.medium.profiles import ExponentialProfile

FORMAT_VERSION = 1
DEFAULT_PROFILE = "demo-dry-firn"

_TOP_KEYS = {"firnray_profile", "name", "description", "kind", "parameters",
             "valid_range_m", "source"}
_SOURCE_KEYS = {"citation", "doi", "note"}
_KIND_PARAMETERS = {
    "exponential": ({"n_deep", "n_surface", "scale_depth_m"}, {"n_air"}),
}


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
    values = {k: _number(path, f"parameters.{k}", v) for k, v in params.items()}
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
    kwargs = {} if z_min is None else {"z_min": z_min}
    try:
        return ExponentialProfile(values["n_deep"], values["n_surface"],
                                  values["scale_depth_m"], n_air=values.get("n_air", 1.0),
                                  info=info, **kwargs)
    except ValueError as err:
        raise ProfileFileError(f"{path}: key 'parameters': {err}") from None


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

"""Stations: named antennas at known positions, with cable delays and groups.

YAML format (``docs/formats.md``)::

    firnray_station: 1
    name: tallow-dome-demo
    description: free text
    profile: demo-dry-firn            # optional: the profile to use by default
    antennas:
      - {id: A1-top, position_m: [0.0, 0.0, -150.0], delay_ns: 210.0, group: string-A}

``delay_ns`` (default 0) is added to every arrival time at that antenna;
``group`` (default "") is free text.  Every key is checked; an error names
the file and the key.
"""

import math
import os
from importlib import resources

import numpy as np
import yaml

from firnray.errors import InputFileError


class StationFileError(InputFileError):
    """A station file could not be read: the message names the file and the key."""


class Station:
    """Antennas of a station.

    Parameters
    ----------
    antennas : mapping
        Antenna id (str) -> position (x, y, z) [m]; z is height (negative in
        the ice).  At least one antenna.
    delays : mapping, optional
        Antenna id -> cable/electronics delay [ns] added to its arrival times
        (default 0 for every antenna).
    groups : mapping, optional
        Antenna id -> channel group name.
    name : str, optional
        Station name.
    profile : str, optional
        Name or path of the profile the station is meant to use.

    Raises
    ------
    ValueError
        For an empty station, a non-finite position, a position that is not
        three numbers, or a delay/group for an unknown antenna.
    """

    def __init__(self, antennas, delays=None, groups=None, name="", profile=None):
        if not hasattr(antennas, "items") or len(antennas) == 0:
            raise ValueError(f"antennas must map at least one antenna id to its (x, y, z) "
                             f"position [m], got {antennas!r}")
        self.name = str(name)
        self.profile = profile
        self.ids = [str(k) for k in antennas]
        if len(set(self.ids)) != len(self.ids):
            raise ValueError("antennas: antenna ids must be unique")
        pos = []
        for key, value in antennas.items():
            try:
                p = np.asarray(value, dtype=float)
            except (TypeError, ValueError):
                p = np.array([np.nan])
            if p.shape != (3,) or not np.all(np.isfinite(p)):
                raise ValueError(f"antennas[{key!r}] must be a finite (x, y, z) position [m], "
                                 f"got {value!r}")
            pos.append(p)
        self.positions = np.array(pos)
        self.delays = np.zeros(len(self.ids))
        self.groups = [""] * len(self.ids)
        index = {k: i for i, k in enumerate(self.ids)}
        for key, value in (delays or {}).items():
            if str(key) not in index:
                raise ValueError(f"delays: unknown antenna id {key!r}; the station has "
                                 f"{self.ids}")
            if not isinstance(value, (int, float)) or not math.isfinite(value):
                raise ValueError(f"delays[{key!r}] must be a finite delay [ns], got {value!r}")
            self.delays[index[str(key)]] = float(value)
        for key, value in (groups or {}).items():
            if str(key) not in index:
                raise ValueError(f"groups: unknown antenna id {key!r}; the station has "
                                 f"{self.ids}")
            self.groups[index[str(key)]] = str(value)
        self._index = index

    def __len__(self):
        return len(self.ids)

    def __repr__(self):
        return f"Station(name={self.name!r}, antennas={len(self)})"

    def index(self, antenna_id):
        """Position of ``antenna_id`` in ``ids``; ValueError for an unknown id."""
        try:
            return self._index[str(antenna_id)]
        except KeyError:
            raise ValueError(f"antenna id {antenna_id!r} is not in station {self.name!r} "
                             f"(antennas: {', '.join(self.ids)})") from None

    @property
    def centre(self):
        """Mean antenna position (x, y, z) [m]."""
        return self.positions.mean(axis=0)


def bundled_station_dir():
    """Folder holding the bundled station files."""
    return str(resources.files("firnray") / "data" / "stations")


def _fail(path, key, message):
    raise StationFileError(f"{path}: key '{key}': {message}")


_TOP = {"firnray_station", "name", "description", "profile", "antennas"}
_ANTENNA = {"id", "position_m", "delay_ns", "group"}


def load_station(name_or_path):
    """Read a station from a YAML file or by the name of a bundled station.

    Parameters
    ----------
    name_or_path : str or os.PathLike
        A path, or a bundled station name (``tallow-dome-demo``).

    Returns
    -------
    Station

    Raises
    ------
    ValueError
        (``StationFileError``) naming the file and the key for a missing,
        unknown or invalid entry.
    """
    path = os.fspath(name_or_path)
    if not os.path.exists(path):
        candidate = os.path.join(bundled_station_dir(), path + ".yaml")
        if not os.path.exists(candidate):
            raise StationFileError(f"{path}: no such file and no bundled station of that name")
        path = candidate
    try:
        with open(path, encoding="utf-8") as fh:
            data = yaml.safe_load(fh)
    except yaml.YAMLError as err:
        raise StationFileError(f"{path}: not valid YAML: {err}") from None
    if not isinstance(data, dict):
        raise StationFileError(f"{path}: expected a mapping at the top level")
    for key in sorted(set(data) - _TOP):
        _fail(path, key, f"unknown key; allowed keys are {sorted(_TOP)}")
    if data.get("firnray_station") != 1:
        _fail(path, "firnray_station", f"expected format version 1, got "
                                       f"{data.get('firnray_station')!r}")
    items = data.get("antennas")
    if not isinstance(items, list) or not items:
        _fail(path, "antennas", "expected a non-empty list of antennas")
    antennas, delays, groups = {}, {}, {}
    for i, item in enumerate(items):
        where = f"antennas[{i}]"
        if not isinstance(item, dict):
            _fail(path, where, f"expected a mapping, got {item!r}")
        for key in sorted(set(item) - _ANTENNA):
            _fail(path, f"{where}.{key}", f"unknown key; allowed: {sorted(_ANTENNA)}")
        for key in ("id", "position_m"):
            if key not in item:
                _fail(path, f"{where}.{key}", "missing")
        ident = str(item["id"])
        if ident in antennas:
            _fail(path, f"{where}.id", f"duplicate antenna id {ident!r}")
        pos = item["position_m"]
        if (not isinstance(pos, list) or len(pos) != 3
                or not all(isinstance(v, (int, float)) and not isinstance(v, bool)
                           and math.isfinite(v) for v in pos)):
            _fail(path, f"{where}.position_m", f"expected [x, y, z] in metres, got {pos!r}")
        antennas[ident] = pos
        if "delay_ns" in item:
            d = item["delay_ns"]
            if isinstance(d, bool) or not isinstance(d, (int, float)) or not math.isfinite(d):
                _fail(path, f"{where}.delay_ns", f"expected a finite number [ns], got {d!r}")
            delays[ident] = float(d)
        if "group" in item:
            groups[ident] = str(item["group"])
    return Station(antennas, delays, groups, name=str(data.get("name", "")),
                   profile=data.get("profile"))

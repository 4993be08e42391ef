"""CSV files of measured pulses: arrival times at antennas, and pulser D/R delays.

Arrival times (one row per pulse; an antenna may appear twice)::

    antenna,time_ns,sigma_ns
    A1-top,6760.1,1.0

Pulser delays (antennas named by their id in a station file)::

    pulser_x_m,pulser_y_m,pulser_z_m,antenna,delay_ns,sigma_ns
    300.0,150.0,-40.0,A1-top,812.4,0.5

Lines starting with ``#`` are comments.  Errors name the file, the line and
the column.
"""

import csv
import math

from firnray.errors import InputFileError


class TimingFileError(InputFileError):
    """A timing CSV could not be read: the message names the file, line and column."""


def _rows(path, required):
    try:
        fh = open(path, encoding="utf-8", newline="")
    except OSError as err:
        raise TimingFileError(f"{path}: cannot open ({err.strerror})") from None
    with fh:
        lines = [(i + 1, line) for i, line in enumerate(fh) if line.strip()
                 and not line.lstrip().startswith("#")]
    if not lines:
        raise TimingFileError(f"{path}: no header line")
    reader = csv.reader([line for _, line in lines])
    header = [h.strip() for h in next(reader)]
    unknown = [h for h in header if h not in required]
    missing = [h for h in required if h not in header]
    if unknown or missing:
        raise TimingFileError(f"{path}: line {lines[0][0]}: columns must be "
                              f"{', '.join(required)}; unknown {unknown}, missing {missing}")
    for (lineno, _), values in zip(lines[1:], reader):
        if len(values) != len(header):
            raise TimingFileError(f"{path}: line {lineno}: expected {len(header)} values, "
                                  f"got {len(values)}")
        yield lineno, dict(zip(header, (v.strip() for v in values)))


def _number(path, lineno, column, text, positive=False):
    try:
        value = float(text)
    except ValueError:
        value = math.nan
    if not math.isfinite(value) or (positive and value <= 0):
        want = "a finite number > 0" if positive else "a finite number"
        raise TimingFileError(f"{path}: line {lineno}: column '{column}': expected {want}, "
                              f"got {text!r}")
    return value


def read_arrivals_csv(path):
    """Rows (antenna_id, time [ns], sigma [ns]) of an arrival-time CSV."""
    rows = []
    for lineno, rec in _rows(path, ("antenna", "time_ns", "sigma_ns")):
        rows.append((rec["antenna"], _number(path, lineno, "time_ns", rec["time_ns"]),
                     _number(path, lineno, "sigma_ns", rec["sigma_ns"], positive=True)))
    if not rows:
        raise TimingFileError(f"{path}: no pulses")
    return rows


def read_pulser_csv(path, station):
    """Pulser delays of a CSV as ``PulserDelays``, antennas looked up in ``station``."""
    from firnray.studies.profile_fit import PulserDelays

    cols = ("pulser_x_m", "pulser_y_m", "pulser_z_m", "antenna", "delay_ns", "sigma_ns")
    pulsers, antennas, delays, sigmas = [], [], [], []
    for lineno, rec in _rows(path, cols):
        pulsers.append([_number(path, lineno, c, rec[c]) for c in cols[:3]])
        try:
            antennas.append(station.positions[station.index(rec["antenna"])])
        except ValueError as err:
            raise TimingFileError(f"{path}: line {lineno}: column 'antenna': {err}") from None
        delays.append(_number(path, lineno, "delay_ns", rec["delay_ns"]))
        sigmas.append(_number(path, lineno, "sigma_ns", rec["sigma_ns"], positive=True))
    if not delays:
        raise TimingFileError(f"{path}: no delays")
    return PulserDelays(pulsers, antennas, delays, sigmas)

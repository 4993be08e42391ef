"""Shared pieces of the benchmark scripts: the random geometry and the catalogue."""

import os
import sys

import numpy as np
import yaml

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.join(ROOT, "tests"))

CATALOGUE = os.path.join(ROOT, "tests", "cases", "geometry.yaml")


def random_in_ice_pairs(n, seed=2026):
    """The benchmark geometry of the batch-speed issue.

    Sources 0-2000 m deep, antennas 0-200 m deep, horizontal distances 0-3 km.
    Returns (sources, receivers) as (n, 2) arrays of (x, z) [m].
    """
    rng = np.random.default_rng(seed)
    src = np.column_stack([np.zeros(n), -rng.uniform(0.0, 2000.0, n)])
    rcv = np.column_stack([rng.uniform(0.0, 3000.0, n), -rng.uniform(0.0, 200.0, n)])
    return src, rcv


def catalogue_cases():
    """(profiles, cases) of the shared geometry catalogue (raw mappings)."""
    with open(CATALOGUE, encoding="utf-8") as fh:
        doc = yaml.safe_load(fh)
    return doc["profiles"], doc["cases"]

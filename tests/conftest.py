"""Shared fixtures: the catalogue of named geometry cases (tests/cases/geometry.yaml)."""

import os

import pytest
import yaml

import firnray

HERE = os.path.dirname(os.path.abspath(__file__))
CATALOGUE = os.path.join(HERE, "cases", "geometry.yaml")


def load_catalogue():
    """(profiles, cases) of the shared catalogue; profiles as ExponentialProfile."""
    with open(CATALOGUE, encoding="utf-8") as fh:
        doc = yaml.safe_load(fh)
    profiles = {k: firnray.ExponentialProfile(**v) for k, v in doc["profiles"].items()}
    return profiles, doc["cases"]


PROFILES, CASES = load_catalogue()


@pytest.fixture(scope="session")
def demo_profile():
    return PROFILES["demo"]

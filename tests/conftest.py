"""Shared test set-up: astropy offline (bundled Earth-orientation data, no downloads)."""

import pathlib

import pytest

from planner.timescales import earth_orientation

REPO = pathlib.Path(__file__).resolve().parents[1]
SAMPLE_TARGETS = REPO / "sample_targets" / "targets.csv"


@pytest.fixture(autouse=True, scope="session")
def _astropy_offline():
    from astropy.utils import data

    earth_orientation.configure()
    with data.conf.set_temp("allow_internet", False):
        yield

"""Fixtures of the photometry tests (synthetic frames from photpipe.scenario)."""

import pytest

from ._synthetic import make_synthetic


@pytest.fixture(scope="session")
def synthetic():
    """Factory of synthetic frames (keyword options as ``make_synthetic``)."""
    return make_synthetic


@pytest.fixture(scope="session")
def standard_frame():
    """One ordinary frame: 1/ρ coma of Afρ = 150 cm, 150 stars, header WCS off by (2, -1.5) pix."""
    return make_synthetic(wcs_offset_pix=(2.0, -1.5))

"""pytest configuration shared by the test suite and the package doctests."""

import matplotlib
from astropy.utils import iers

# Figures are drawn off-screen everywhere the tests run.
matplotlib.use("Agg")

# No test may reach for IERS files over the network: CI has no network but the package index.
iers.conf.auto_download = False

# ``photpipe/__main__.py`` runs the command line when imported; benchmarks and the sample frames
# are not tests.
collect_ignore = ["photpipe/__main__.py", "benchmarks", "sample_frames", "results"]

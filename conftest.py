"""pytest configuration shared by the test suite and the package doctests."""

import matplotlib

# Figures are drawn off-screen everywhere the tests run.
matplotlib.use("Agg")

# ``photpipe/__main__.py`` runs the command line when imported; benchmarks and the sample frames
# are not tests.
collect_ignore = ["photpipe/__main__.py", "benchmarks", "sample_frames", "results"]

"""photpipe: from raw CCD frames of a comet to Afρ, nucleus size, spin and activity trend.

Data flows one way through the subpackages::

    frames -> (calibrated frames) -> photometry, nucleus -> campaign -> rotation, activity, size

with :mod:`photpipe.geometry` supplying r_h, Δ, phase angle and elongation at every frame, and
:mod:`photpipe.scenario` rendering synthetic nights with known truth for the tests and the demo.
"""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("photpipe")
except PackageNotFoundError:  # running from a source tree that was never installed
    __version__ = "0.0.0+unknown"

__all__ = ["__version__"]

"""Moffat point-spread functions for the synthetic sky (defined in `photpipe.models.moffat`).

The renderers import `moffat_stamp` from here; the one implementation is in `photpipe.models`.
"""

from photpipe.models.moffat import moffat_alpha, moffat_stamp

__all__ = ["moffat_alpha", "moffat_stamp"]

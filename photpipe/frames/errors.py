"""The exception raised for a frame that cannot be read or calibrated."""

__all__ = ["FrameError"]


class FrameError(ValueError):
    """A frame file cannot be used; the message starts with the file path and says why.

    Batch code (:func:`~photpipe.frames.scan_night`, the ``run`` command) catches it per frame,
    records the reason in the skip list and goes on with the rest of the night.

    Parameters
    ----------
    path : str or path-like
        The file concerned.
    problem : str
        One line saying what is wrong.

    Examples
    --------
    >>> err = FrameError("night1/sci_0007.fits", "header has no DATE-OBS or MJD-OBS")
    >>> str(err)
    'night1/sci_0007.fits: header has no DATE-OBS or MJD-OBS'
    >>> err.problem
    'header has no DATE-OBS or MJD-OBS'
    """

    def __init__(self, path, problem):
        self.path = str(path)
        self.problem = str(problem)
        super().__init__(f"{self.path}: {self.problem}")

    def __reduce__(self):
        # keep the two-argument form when the error crosses a process boundary (Dask workers)
        return (type(self), (self.path, self.problem))

import pickle

from photpipe.frames import FrameError


def test_message_starts_with_the_path():
    err = FrameError("night/sci_0002.fits", "header has no EXPTIME or EXPOSURE")
    assert str(err) == "night/sci_0002.fits: header has no EXPTIME or EXPOSURE"
    assert isinstance(err, ValueError)


def test_survives_a_process_boundary():
    err = pickle.loads(pickle.dumps(FrameError("a.fits", "file is truncated")))
    assert (err.path, err.problem, str(err)) == ("a.fits", "file is truncated",
                                                 "a.fits: file is truncated")

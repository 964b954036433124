"""How the frames of one night are named in the store and in ``calibrated/``.

A frame is keyed by its file's stem (``sci_0003``) when no other file of the night shares it,
else by its file name (``sci_0003.fits`` beside ``sci_0003.fits.fz``), else by its path below the
night's folders; so two files never overwrite each other's results. Files of equal content are
measured once; across runs the store follows a file's content and full path
(`~photpipe.store.CampaignStore.claim_frame`).
"""

import os
from collections import Counter

__all__ = ["frame_keys", "calibrated_name", "duplicates"]


def frame_keys(infos):
    """Return ``path -> key`` for the frames of one night, unique within the night.

    Parameters
    ----------
    infos : sequence of `~photpipe.frames.FrameInfo`

    Examples
    --------
    >>> from types import SimpleNamespace as F
    >>> keys = frame_keys([F(path="/n/sci_3.fits", name="sci_3"),
    ...                    F(path="/n/sci_3.fits.fz", name="sci_3"), F(path="/n/b.fits", name="b")])
    >>> [keys[p] for p in ("/n/sci_3.fits", "/n/sci_3.fits.fz", "/n/b.fits")]
    ['sci_3.fits', 'sci_3.fits.fz', 'b']
    """
    infos = list(infos)
    stems = Counter(info.name for info in infos)
    bases = Counter(os.path.basename(info.path) for info in infos)
    root = os.path.commonpath([os.path.dirname(info.path) for info in infos]) if infos else ""
    keys = {}
    for info in infos:
        base = os.path.basename(info.path)
        if stems[info.name] == 1:
            keys[info.path] = info.name
        elif bases[base] == 1:
            keys[info.path] = base
        else:
            keys[info.path] = os.path.relpath(info.path, root).replace(os.sep, "/")
    return keys


def calibrated_name(key):
    """The file name of a frame's calibrated FITS in ``calibrated/``, one for each key.

    ``%`` and ``/`` are written ``%25`` and ``%2F``, so two keys never share a file.

    Examples
    --------
    >>> calibrated_name("sci_0003"), calibrated_name("sci_0003.fits.fz")
    ('sci_0003.fits', 'sci_0003.fits.fz.fits')
    >>> calibrated_name("b/sci_0003.fits"), calibrated_name("b%2Fsci_0003.fits")
    ('b%2Fsci_0003.fits.fits', 'b%252Fsci_0003.fits.fits')
    """
    return f"{key.replace('%', '%25').replace('/', '%2F')}.fits"


def duplicates(infos, hashes, keys):
    """Frames whose content equals an earlier frame's: ``path -> key of the one measured``.

    The first of equal files in path order is measured; the others are left out.

    Examples
    --------
    >>> from types import SimpleNamespace as F
    >>> infos = [F(path="/n/a.fits"), F(path="/n/b.fits")]
    >>> hashes = {"/n/a.fits": "h", "/n/b.fits": "h"}
    >>> duplicates(infos, hashes, {"/n/a.fits": "a", "/n/b.fits": "b"})
    {'/n/b.fits': 'a'}
    """
    first, out = {}, {}
    for info in sorted(infos, key=lambda i: i.path):
        digest = hashes[info.path]
        if digest in first:
            out[info.path] = keys[first[digest]]
        else:
            first[digest] = info.path
    return out

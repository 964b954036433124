"""Content and configuration hashes: what decides that a frame is already measured."""

import hashlib
import json
from pathlib import Path

__all__ = ["file_sha256", "config_hash", "FRAME_SECTIONS"]

#: Configuration sections that shape a single frame's results. Changing any other section
#: (the campaign name, the list of nights, the run's workers, the campaign-level stages) does not
#: make frames measured before count as stale.
FRAME_SECTIONS = ("frames", "sites", "target", "geometry", "photometry", "nucleus",
                  "instruments", "filters", "catalogue")

#: Keys naming files whose content, not only whose name, shapes the results.
_FILE_KEYS = (("target", "ephemeris_table"), ("photometry", "reference_stars"),
              ("photometry", "reference_store"), ("photometry", "phase_function_table"))


def file_sha256(path, *, block=1 << 20):
    """Return the hex sha256 of a file's bytes, read in blocks.

    Examples
    --------
    >>> import tempfile
    >>> with tempfile.NamedTemporaryFile(delete=False) as f:
    ...     _ = f.write(b"abc")
    >>> file_sha256(f.name)[:16]
    'ba7816bf8f01cfea'
    """
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        while chunk := handle.read(block):
            digest.update(chunk)
    return digest.hexdigest()


def config_hash(config, *, sections=FRAME_SECTIONS):
    """Return a hash of the configuration sections that shape per-frame results.

    Parameters
    ----------
    config : dict
        A configuration as returned by :func:`photpipe.config.load_config`.
    sections : tuple of str, optional
        The sections to include.

    Returns
    -------
    digest : str
        Hex sha256 of the canonical JSON of those sections, plus the content hash of any
        existing file they name (a reference catalogue edited in place changes the hash).

    Examples
    --------
    >>> a = config_hash({"photometry": {"apertures_km": [5000.0]}, "run": {"workers": 1}})
    >>> b = config_hash({"photometry": {"apertures_km": [5000.0]}, "run": {"workers": 4}})
    >>> a == b
    True
    """
    part = {name: config.get(name, {}) for name in sections}
    files = {}
    for section, key in _FILE_KEYS:
        value = config.get(section, {}).get(key) if section in sections else None
        if key == "reference_store" and config.get(section, {}).get("reference_stars"):
            continue  # built from the catalogue, whose hash is taken: the same content twice
        if isinstance(value, str) and Path(value).is_file():
            files[f"{section}.{key}"] = file_sha256(value)
    text = json.dumps({"config": part, "files": files}, sort_keys=True, default=str)
    return hashlib.sha256(text.encode()).hexdigest()

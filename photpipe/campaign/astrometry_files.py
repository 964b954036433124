"""The campaign's comet positions as ADES files: one pair per night, one file for the campaign.

``<results>/<night>/<night>_astrometry.psv`` and ``.xml`` hold a night's positions;
``<results>/astrometry.psv`` all of them, the file ``photpipe orbit`` reads. Each record gives the
site as WGS84 coordinates when the frame's site is known, so no station list is needed.
"""

import logging
from pathlib import Path

__all__ = ["write_night_positions", "write_campaign_positions"]

log = logging.getLogger("photpipe.campaign")


def _records(store, night=None):
    from photpipe.orbit import ades_records

    table = store.export_table("astrometry", night=night)
    return ades_records(table) if len(table) else []


def write_night_positions(store, folder, night):
    """Write a night's ADES files (PSV and XML); return the paths written (none without rows)."""
    from photpipe.orbit import write_night_ades

    records = _records(store, night)
    if not records:
        return []
    try:
        return list(write_night_ades(records, folder, night))
    except OSError as exc:
        log.info("%s: comet positions not written as ADES (%s)", folder, exc)
        return []


def write_campaign_positions(store, results):
    """Write ``<results>/astrometry.psv`` with every night's positions; return its path or None."""
    from photpipe.orbit import write_ades_psv

    records = _records(store)
    if not records:
        return None
    path = Path(results) / "astrometry.psv"
    write_ades_psv(records, path)
    return path

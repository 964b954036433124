"""Writes frames into a campaign store from a separate process (used by the two-writer test).

Run as ``python _writer.py STORE FIRST LAST TAG``: stores frames FIRST..LAST-1, one transaction
each, with three aperture rows per frame.
"""

import sys

from astropy import units as u
from astropy.table import QTable

from photpipe.campaign import FrameRecord
from photpipe.store import CampaignStore


def record(i, tag):
    rows = QTable({"rho_km": [5000.0, 10000.0, 20000.0] * u.km,
                   "mag": [15.0 + i / 100, 14.5, 14.0] * u.mag,
                   "flags": ["", "", tag]})
    return FrameRecord("n1", f"sci_{i:04d}", f"/raw/sci_{i:04d}.fits", f"hash{i}",
                       mjd_utc_mid=61000.0 + i / 1000, stages=("calibration", "photometry"),
                       measurements=rows, nucleus={"nucleus_mag": 18.0 * u.mag})


def main(path, first, last, tag):
    with CampaignStore(path, timeout=120) as store:
        run = store.start_run(f"writer {tag}", config_hash="cfg")
        for i in range(first, last):
            store.write_frame(run, record(i, tag), config_hash="cfg")
        store.end_run(run)


if __name__ == "__main__":
    main(sys.argv[1], int(sys.argv[2]), int(sys.argv[3]), sys.argv[4])

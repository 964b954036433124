"""Write a synthetic campaign as ADES files and a sites file, as an observer would have them."""

import numpy as np
from astropy import units as u

from photpipe.orbit.ades import write_ades_psv, write_ades_xml


def write_campaign(folder, table, sites, *, xml_share=0.5):
    """Half the sites to PSV files, half to XML; returns the file paths and the sites file."""
    paths = []
    stations = sorted(set(table["stn"]))
    for k, stn in enumerate(stations):
        rows = table[table["stn"] == stn]
        records = [{"provID": "C/2026 Z1", "mode": "CCD", "stn": stn, "obsTime": r["time"],
                    "ra": r["ra_deg"], "dec": r["dec_deg"], "rmsRA": r["rms_ra_arcsec"],
                    "rmsDec": r["rms_dec_arcsec"], "astCat": "Gaia3"} for r in rows]
        xml = k < xml_share * len(stations)
        path = folder / f"{stn}.{'xml' if xml else 'psv'}"
        (write_ades_xml if xml else write_ades_psv)(records, str(path),
                                                     observatory={"mpcCode": stn})
        paths.append(str(path))
    lines = []
    for code, loc in sites.items():
        lines += [f"[sites.{code}]", f"longitude_deg = {loc.lon.to_value(u.deg):.9f}",
                  f"latitude_deg = {loc.lat.to_value(u.deg):.9f}",
                  f"height_m = {np.round(loc.height.to_value(u.m), 3)}", ""]
    sites_path = folder / "sites.toml"
    sites_path.write_text("\n".join(lines))
    return paths, str(sites_path)

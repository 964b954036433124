"""The inputs of ``photpipe report``: measurements and nucleus fits, rotation and size results.

From the campaign store when it exists, else from the exported ``measurements.ecsv`` /
``nucleus.ecsv`` (one at the top of the results folder, or one per night folder).
"""

import glob
from pathlib import Path

from astropy.table import QTable, vstack

from .result_files import read_ecsv, read_json

__all__ = ["read_inputs", "from_store", "stage_results"]


def _read_results_table(results, name):
    top = results / f"{name}.ecsv"
    if top.is_file():
        return read_ecsv(top), [str(top)]
    per_night = sorted(glob.glob(str(results / "*" / f"{name}.ecsv")))
    if not per_night:
        return None, []
    tables = [read_ecsv(p) for p in per_night]
    tables = [t for t in tables if len(t)]
    if not tables:
        return QTable(), per_night
    return vstack(tables, join_type="outer", metadata_conflicts="silent"), per_night


def from_store(store):
    """Return the measurements and nucleus tables of a campaign store."""
    return store.export_table("measurements"), store.export_table("nucleus")


def stage_results(folder):
    """Return the ``rotation`` and ``size`` results found as JSON in ``folder`` (a dict).

    Raises
    ------
    ValueError
        Naming the file, when one exists but is not JSON.
    """
    found = {}
    for name in ("rotation", "size"):
        value = read_json(Path(folder) / f"{name}.json", f"{name} result")
        if value is not None:
            found[name] = value
    return found


def read_inputs(config, *, from_tables=False):
    """Gather the report's inputs for a configuration.

    Returns
    -------
    measurements, nucleus : `~astropy.table.QTable` or None
    extra : dict
        ``rotation`` and ``size`` dicts when their JSON files exist, and ``sources`` (where
        the tables came from).

    Raises
    ------
    ValueError
        Naming the file, when a table exists but cannot be read.
    """
    results = Path(config["campaign"]["results"])
    store_path = Path(config["campaign"].get("store", results / "campaign.sqlite"))
    extra = {"sources": []}
    if not from_tables and store_path.is_file():
        from photpipe.store import CampaignStore

        with CampaignStore(store_path) as store:
            measurements, nucleus = from_store(store)
        extra["sources"].append(f"campaign store {store_path}")
    else:
        measurements, src_m = _read_results_table(results, "measurements")
        nucleus, src_n = _read_results_table(results, "nucleus")
        extra["sources"] += src_m + src_n
    extra.update(stage_results(results))
    return measurements, nucleus, extra

"""The batch run: every night of a configuration, stage by stage, into the campaign store.

`run_campaign` reads like the plan: check once what concerns every frame (the settings, the
orbit, the sites, the reference stars), make the results folder and open the store, clean what a
killed run left behind, reduce each ``[[night]]`` (`~photpipe.campaign.night.NightRun`: read the
headers, build the masters, compute the geometry once, one task per science frame on the
:class:`~photpipe.campaign.TaskRunner`, each result stored in one transaction as it comes back,
the night's tables exported), then export the lightcurve and run the campaign steps in the
data's order (rotation -> activity -> size -> report, `~photpipe.campaign.steps`).

Only this module's caller (the CLI) reads the configuration file; the stages get plain values.
"""

import hashlib
import logging
import os
import time
from pathlib import Path

from photpipe.config import ConfigError, read_run
from photpipe.store import CampaignStore, write_table_atomic

from .astrometry_files import write_campaign_positions
from .hashing import config_hash
from .night import NIGHT_TABLES, NightRun, night_name
from .preflight import check_before_frames
from .results_folder import ResultsError, clean_leftovers, prepare_results
from .runner import TaskRunner
from .stages import CAMPAIGN_STEPS, FRAME_STAGES
from .steps import run_campaign_steps
from .summary import RunSummary

__all__ = ["run_campaign", "night_name", "NIGHT_TABLES"]

log = logging.getLogger("photpipe.campaign")


class _Run:
    """State of one run: the configuration, the store, the runner, the summary being filled."""

    def __init__(self, config, settings, store, runner, summary, *, rerun, echo):
        self.config = config
        self.settings = settings
        self.store = store
        self.runner = runner
        self.summary = summary
        self.rerun = rerun
        self.echo = echo
        self.results = Path(config["campaign"]["results"])
        self.frame_hash = config_hash(config)
        self.frame_stages = FRAME_STAGES

    def campaign(self):
        """Export the lightcurve and run the campaign steps on the store's tables."""
        lightcurve = self.store.lightcurve()
        path = self.results / "lightcurve.ecsv"
        if len(lightcurve) or not path.is_file():
            write_table_atomic(lightcurve, path)
        lightcurve.meta["path"] = str(path)
        self.summary.outputs.append(str(path))
        positions = write_campaign_positions(self.store, self.results)
        if positions is not None:
            self.summary.outputs.append(str(positions))
        steps = run_campaign_steps(
            self.config, lightcurve, self.store.export_table("measurements"),
            self.store.export_table("nucleus"), self.results, echo=self.echo,
            sources=[f"campaign store {self.store.path}"])
        self.summary.skipped.extend(steps.skipped)
        self.summary.step_results = steps.results
        for name, written in steps.results.items():
            summary = written.get("summary") if isinstance(written, dict) \
                else getattr(written, "summary", None)
            if summary:
                # The step's own account goes to the log whole; the screen gets its title.
                log.info("%s step:\n%s", name, summary)
                self.echo(_step_line(name, written, summary))
            self.summary.outputs.extend(str(p) for p in _paths(written))


def _step_line(name, written, summary):
    """The screen's line for a campaign step.

    The size step's line gives the radius with its status (as the end headline says it); any
    other step's gives its title.
    """
    if name == "size" and isinstance(written, dict):
        from photpipe.report import size_line

        return f"size: {size_line(written)} (full text in the log)"
    return f"{name}: {str(summary).splitlines()[0]} (full text in the log)"


def _paths(written):
    """The files a campaign step says it wrote."""
    if written is None:
        return []
    if isinstance(written, (str, os.PathLike)):
        return [written] if os.path.isfile(written) else []
    if not isinstance(written, dict):
        written = {"path": getattr(written, "path", None)}
    found = []
    for key, value in written.items():
        if key == "summary":
            continue
        if isinstance(value, dict):
            found.extend(value.values())
        else:
            found.extend(value if isinstance(value, (list, tuple)) else [value])
    return [p for p in found if isinstance(p, (str, os.PathLike)) and os.path.isfile(p)]


def _open_log(results, run_id):
    folder = Path(results) / "logs"
    path = folder / f"run-{run_id:04d}.log"
    try:
        folder.mkdir(parents=True, exist_ok=True)
        handler = logging.FileHandler(path, encoding="utf-8")
    except OSError as exc:
        msg = f"{path}: cannot write the run's log ({exc.strerror or exc})"
        raise ResultsError(msg) from exc
    handler.setFormatter(logging.Formatter("%(asctime)s %(levelname)-7s %(message)s",
                                           "%Y-%m-%dT%H:%M:%S"))
    handler.setLevel(logging.DEBUG)
    return path, handler


def _check_night_names(config):
    names = [night_name(n) for n in config["night"]]
    duplicated = sorted({n for n in names if names.count(n) > 1})
    if duplicated:
        msg = (f"{config.get('_file', 'configuration')}: [[night]] name: two entries share the "
               f"name {duplicated[0]!r}; give one of them a 'name'")
        raise ConfigError(msg)


def _where_tasks_run(config, workers, scheduler):
    run_settings = read_run(config)
    if workers is None and scheduler is None:
        scheduler = run_settings.scheduler
    if workers is None:
        workers = run_settings.workers
    return workers, scheduler


def _finish(summary, runner, store, status, started):
    """Fill the summary's timings and close the run in the store (never masking an error)."""
    summary.status = status
    summary.seconds = time.perf_counter() - started
    summary.task_seconds = list(runner.task_seconds)
    summary.task_cpu_seconds = list(runner.task_cpu_seconds)
    summary.phase_seconds["workers start"] = runner.start_seconds
    summary.bytes_to_workers = runner.bytes_sent
    summary.bytes_from_workers = runner.bytes_received
    summary.worker_peak_mb = dict(runner.peak_memory_mb)
    summary.worker_memory_track = {pid: list(mb) for pid, mb in runner.memory_track.items()}
    try:
        store.end_run(summary.run_id, status)
    except Exception:  # noqa: BLE001 - the error that ended the run is the one to report
        log.debug("could not record the end of the run", exc_info=True)
    log.info("summary\n%s", summary.format())
    store.close()


def _start(config, results, echo):
    """Open the store, start the run, clean leftovers, open the log; (store, run_id, log)."""
    store = CampaignStore(config["campaign"]["store"])
    text = config.get("_text", "")
    try:
        run_id = store.start_run(text, config_hash=hashlib.sha256(text.encode()).hexdigest())
        if not store.other_live_runs(run_id):
            for path in clean_leftovers(results):
                echo(f"removed {path}, left half-written by an interrupted run")
        log_path, handler = _open_log(results, run_id)
    except BaseException:
        store.close()
        raise
    return store, run_id, log_path, handler


def run_campaign(config, *, workers=None, scheduler=None, rerun=False, progress=True,
                 echo=print):
    """Reduce every night of a configuration into its campaign store.

    Parameters
    ----------
    config : dict
        As returned by :func:`photpipe.config.load_config`.
    workers : int, optional
        Local worker processes (default ``[run] workers``, else 1; 0 runs in this process).
    scheduler : str, optional
        Address of an existing Dask scheduler (default ``[run] scheduler``).
    rerun : bool, optional
        Measure again frames already measured with the same file content and configuration.
    progress : bool, optional
        Show progress bars.
    echo : callable, optional
        Where progress lines go (also written to the run's log file).

    Returns
    -------
    RunSummary

    Raises
    ------
    ConfigError
        If the configuration cannot be used; checked before any frame is touched.
    StoreError
        If the campaign store is damaged or cannot be written.
    ResultsError
        If the results folder cannot be made or written.
    """
    started = time.perf_counter()
    workers, scheduler = _where_tasks_run(config, workers, scheduler)
    _check_night_names(config)
    results = prepare_results(config["campaign"]["results"])
    settings = check_before_frames(config, results)
    store, run_id, log_path, handler = _start(config, results, echo)
    root = logging.getLogger("photpipe")
    old_level = root.level
    root.addHandler(handler)
    root.setLevel(logging.DEBUG)

    def say(line):
        log.info("%s", line)
        echo(line)

    if settings.reference.problem:
        say(f"reference stars: {settings.reference.problem}; frames are calibrated but not "
            "measured")
    elif settings.reference.built:
        say(f"reference stars: {settings.reference.n_stars} indexed once for the campaign in "
            f"{settings.reference.store_path}")
    runner = TaskRunner(workers=workers, scheduler=scheduler, progress=progress)
    summary = RunSummary(run_id=run_id, results=str(results), store=str(store.path),
                         log=str(log_path), where=runner.description,
                         stages=list(FRAME_STAGES + CAMPAIGN_STEPS))
    run = _Run(config, settings, store, runner, summary, rerun=rerun, echo=say)
    status = "failed"
    try:
        say(f"run {run_id}: {len(config['night'])} night(s), tasks on {runner.description}")
        nights = NightRun(run)
        with runner:
            nights.nights(config["night"])
        campaign_started = time.perf_counter()
        run.campaign()
        summary.phase_seconds["campaign steps"] = time.perf_counter() - campaign_started
        status = "completed"
    except KeyboardInterrupt:
        status = "interrupted"
        raise
    finally:
        _finish(summary, runner, store, status, started)
        root.removeHandler(handler)
        root.setLevel(old_level)
        handler.close()
    return summary

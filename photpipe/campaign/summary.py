"""What a run did, for the one-screen summary at its end."""

import os
from dataclasses import dataclass, field

__all__ = ["NightSummary", "RunSummary"]


@dataclass
class NightSummary:
    """Counts and outcomes of one night of a run.

    Attributes
    ----------
    name : str
    folder : str
    counts : dict
        Frames read per kind.
    measured : int
        Science frames measured in this run.
    reused : int
        Science frames already in the store with the same file content and configuration.
    kept : int
        Science frames tried again without success, whose earlier results were kept.
    skipped : list of `~photpipe._records.Skipped`
    outputs : list of str
    """

    name: str
    folder: str
    counts: dict = field(default_factory=dict)
    measured: int = 0
    reused: int = 0
    kept: int = 0
    skipped: list = field(default_factory=list)
    outputs: list = field(default_factory=list)


@dataclass
class RunSummary:
    """The outcome of one ``photpipe run``.

    Attributes
    ----------
    run_id : int
    results : str
        The results folder.
    store : str
        The campaign store file.
    log : str
        The run's log file.
    where : str
        Where the tasks ran.
    stages : list of str
        Names of the stages the run went through.
    nights : list of NightSummary
    skipped : list of `~photpipe._records.Skipped`
        Campaign-level items that could not be done (a missing night folder, a stage).
    outputs : list of str
        Campaign-level files written.
    cautions : list of str
        Lines to show prominently (the target near the Sun).
    seconds : float
    status : str
    task_seconds : list of float
        Wall time of each frame task, measured in the worker.
    task_cpu_seconds : list of float
        CPU time of each frame task in its worker process; well below ``task_seconds`` means
        the task waited for a core other work held.
    worker_peak_mb : dict
        Peak resident memory of each worker process (pid -> MB).
    worker_memory_track : dict
        Peak resident memory of each worker process after each of its frame tasks (pid -> list
        of MB, see `~photpipe.campaign.TaskRunner`).
    phase_seconds : dict
        Wall time of the parts of the run: ``workers start`` (starting the processes),
        ``frames`` (from the first frame task handed out to the last stored, over all nights),
        the rest being the parent's own serial work (headers, masters, geometry, exports and
        the campaign stages).
    bytes_to_workers, bytes_from_workers : int
        Pickled task inputs sent and results received (see `~photpipe.campaign.TaskRunner`).
    """

    run_id: int
    results: str
    store: str
    log: str
    where: str = ""
    stages: list = field(default_factory=list)
    step_results: dict = field(default_factory=dict)
    nights: list = field(default_factory=list)
    skipped: list = field(default_factory=list)
    outputs: list = field(default_factory=list)
    cautions: list = field(default_factory=list)
    seconds: float = 0.0
    status: str = "completed"
    task_seconds: list = field(default_factory=list)
    task_cpu_seconds: list = field(default_factory=list)
    worker_peak_mb: dict = field(default_factory=dict)
    worker_memory_track: dict = field(default_factory=dict)
    phase_seconds: dict = field(default_factory=dict)
    bytes_to_workers: int = 0
    bytes_from_workers: int = 0

    @property
    def measured(self):
        """Science frames measured in this run, over all nights."""
        return sum(n.measured for n in self.nights)

    @property
    def kept(self):
        """Science frames whose earlier results were kept (tried again without success)."""
        return sum(n.kept for n in self.nights)

    @property
    def reused(self):
        """Science frames found already measured, over all nights."""
        return sum(n.reused for n in self.nights)

    def all_skipped(self):
        """Every skip record of the run: per night, then campaign level."""
        out = [s for n in self.nights for s in n.skipped]
        return out + list(self.skipped)

    def format(self, *, max_items=3):
        """Return the summary as text for the terminal (about one screen).

        Examples
        --------
        >>> s = RunSummary(3, "/r", "/r/campaign.sqlite", "/r/logs/run-0003.log", seconds=4.2)
        >>> print(s.format().splitlines()[0])
        run 3 completed in 4.2 s
        """
        lines = [f"run {self.run_id} {self.status} in {_duration(self.seconds)}"
                 + (f" on {self.where}" if self.where else "")]
        if self.stages:
            lines.append(f"stages run: {', '.join(self.stages)}")
        for text in self.cautions:
            lines.append(f"CAUTION: {text}")
        if self.nights:
            lines.append("")
            lines.append(f"{'night':<24}{'frames':>8}{'science':>9}{'measured':>10}"
                         f"{'reused':>8}{'kept':>6}{'skipped':>9}")
            for n in self.nights:
                lines.append(f"{n.name[:23]:<24}{sum(n.counts.values()):>8}"
                             f"{n.counts.get('science', 0):>9}{n.measured:>10}{n.reused:>8}"
                             f"{n.kept:>6}{len(n.skipped):>9}")
            if self.kept:
                lines.append(f"kept: {self.kept} frame(s) not measured this time keep their "
                             "earlier results")
        groups = {}
        for night, s in [(n.name, s) for n in self.nights for s in n.skipped] + [
                ("campaign", s) for s in self.skipped]:
            groups.setdefault((night, s.stage, s.reason), []).append(os.path.basename(s.item))
        if groups:
            lines.append("")
            lines.append("skipped, and why:")
            for (night, stage, reason), items in groups.items():
                shown = ", ".join(items[:max_items])
                more = f" and {len(items) - max_items} more" if len(items) > max_items else ""
                lines.append(f"  {night} [{stage}] {reason}: {shown}{more}")
        lines.append("")
        lines.append(f"store: {self.store}")
        if self.outputs or any(n.outputs for n in self.nights):
            files = list(self.outputs) + [p for n in self.nights for p in n.outputs]
            rel = [os.path.relpath(p, self.results) for p in files]
            lines.append(f"outputs ({len(rel)} files): {', '.join(rel[:8])}"
                         + (" ..." if len(rel) > 8 else ""))
        lines.append(f"log: {self.log}")
        lines.append(f"results folder: {self.results}")
        return "\n".join(lines)


def _duration(seconds):
    if seconds < 60:
        return f"{seconds:.1f} s"
    minutes, sec = divmod(int(round(seconds)), 60)
    if minutes < 60:
        return f"{minutes} min {sec} s"
    hours, minutes = divmod(minutes, 60)
    return f"{hours} h {minutes} min"

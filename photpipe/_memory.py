"""Peak resident memory of the calling process, for run summaries and benchmarks."""

import sys

__all__ = ["peak_resident_mb"]


def peak_resident_mb():
    """Peak resident memory of the calling process itself, MiB.

    On Linux this is the high-water mark of the process's own memory map (``VmHWM`` in
    ``/proc/self/status``), which starts afresh when a worker process starts; ``ru_maxrss``
    would carry over the parent's peak, since it survives fork and exec (getrusage(2)). It is
    the fallback elsewhere.

    Examples
    --------
    >>> peak_resident_mb() > 0
    True
    """
    try:
        with open("/proc/self/status", encoding="ascii") as status:
            for line in status:
                if line.startswith("VmHWM:"):
                    return float(line.split()[1]) / 1024.0
    except OSError:
        pass
    try:
        import resource
    except ImportError:  # pragma: no cover - not on POSIX
        return 0.0
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return peak / 1024.0 if sys.platform != "darwin" else peak / 2**20

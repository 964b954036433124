"""Toy task functions for the runner tests (importable by worker processes)."""

import os
import warnings

from photpipe._warnings import PoorResultWarning


def square(x):
    return x * x


def fail_on_three(x):
    if x == 3:
        msg = f"item {x} is bad"
        raise ValueError(msg)
    return x


def warn_and_return(x):
    warnings.warn(f"item {x} is poor", PoorResultWarning, stacklevel=1)
    return x


def add_shared(x, shared):
    return x + shared["offset"]


def die_on_two(x):
    if x == 2:
        os._exit(3)  # the worker process dies without a Python exception
    return x


class Unpicklable(Exception):
    def __init__(self, handle):
        super().__init__("cannot travel")
        self.handle = handle

    def __reduce__(self):
        raise TypeError("not picklable")


def raise_unpicklable(x):
    raise Unpicklable(lambda: x)


def quantity_sum(x, shared):
    # Inputs with units must reach the worker with their units.
    return (x["length"] + shared["offset"]).to("km")


def environment(names):
    return {name: os.environ.get(name) for name in names}

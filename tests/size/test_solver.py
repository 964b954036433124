import re

import numpy as np
import pytest
from scipy.optimize import brentq

from photpipe.size._solver import bracketed_root


def test_against_scipy_brentq():
    # scipy.optimize.brentq as the reference root finder, element by element
    c = np.linspace(0.1, 50.0, 200)

    def f(x, idx):
        return np.exp(-5.0 / x) * x**3 - c[idx]

    roots = bracketed_root(f, np.full(c.size, 0.5), np.full(c.size, 100.0))
    ref = [brentq(lambda x, ci=ci: np.exp(-5.0 / x) * x**3 - ci, 0.5, 100.0, xtol=1e-14)
           for ci in c]
    assert np.allclose(roots, ref, rtol=1e-10, atol=1e-9)


def test_shape_kept_and_exact_root_at_end():
    lo = np.zeros((2, 3))
    hi = np.full((2, 3), 4.0)
    target = np.arange(6.0).reshape(2, 3) / 2 + 0.25

    def f(x, idx):
        return x - target.flat[idx]

    x = bracketed_root(f, lo, hi)
    assert x.shape == (2, 3) and np.allclose(x, target, atol=1e-9)
    assert bracketed_root(lambda x, idx: x - 1.0, np.array([1.0]), np.array([3.0]))[0] == 1.0


def test_no_sign_change():
    with pytest.raises(ValueError, match=re.escape("no sign change in 1 bracket(s)")):
        bracketed_root(lambda x, idx: x**2 + 1, np.array([-1.0]), np.array([1.0]))

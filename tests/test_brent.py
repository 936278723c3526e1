"""orcscreen.brent against SciPy itself (the reference library whose arithmetic it transcribes):
the same root, the same minimum and the same number of evaluations, to the last bit, on many
functions, tolerances and brackets; the same errors."""

import math

import numpy as np
import pytest
from scipy.optimize import brentq as scipy_brentq
from scipy.optimize import minimize_scalar

from orcscreen.brent import RTOL_MIN, brentq, minimize_scalar_bounded


def _root_problems(n=400):
    rng = np.random.default_rng(20261202)
    out = []
    for i in range(n):
        kind = i % 5
        c = rng.uniform(-3, 3, size=4)
        if kind == 0:
            f = lambda x, c=c: c[0] + c[1] * x + c[2] * x ** 2 + c[3] * x ** 3  # noqa: E731
        elif kind == 1:
            f = lambda x, c=c: math.exp(0.3 * c[0] * x) - 1.5 - 0.1 * c[1]  # noqa: E731
        elif kind == 2:
            f = lambda x, c=c: math.tanh(5 * (x - c[0])) + 0.01 * c[1]  # noqa: E731
        elif kind == 3:
            f = lambda x, c=c: math.log(1.0 + x * x) - abs(c[0])  # noqa: E731
        else:
            f = lambda x, c=c: (x - c[0]) ** 3 * 1e-6 + 1e-12 * c[1]  # noqa: E731
        a, b = sorted(rng.uniform(-10, 10, size=2))
        try:
            if np.sign(f(a)) == np.sign(f(b)):
                continue
        except OverflowError:
            continue
        xtol = float(10.0 ** rng.uniform(-14, -2)) if i % 3 else 1e-300
        rtol = RTOL_MIN if i % 2 else 1e-6
        out.append((f, a, b, xtol, rtol))
    return out


def test_brentq_is_scipys_to_the_last_bit():
    problems = _root_problems()
    assert len(problems) > 100
    for f, a, b, xtol, rtol in problems:
        calls_a, calls_b = [], []
        ra = brentq(lambda x: (calls_a.append(x), f(x))[1], a, b, xtol=xtol, rtol=rtol, maxiter=200)
        rb = scipy_brentq(lambda x: (calls_b.append(x), f(x))[1], a, b, xtol=xtol, rtol=rtol, maxiter=200)
        assert ra == rb and calls_a == calls_b, (a, b, xtol, rtol)


def test_brentq_errors_as_scipy():
    with pytest.raises(ValueError, match="different signs"):
        brentq(lambda x: x * x + 1.0, -1.0, 1.0)
    with pytest.raises(ValueError, match="NaN"):
        brentq(lambda x: math.nan if x > 0.3 else x - 0.5, 0.0, 1.0)
    with pytest.raises(ValueError):
        brentq(lambda x: x, -1.0, 1.0, rtol=1e-20)
    with pytest.raises(RuntimeError):
        brentq(lambda x: x ** 3 - 0.1, -10.0, 10.0, xtol=1e-300, maxiter=3)
    assert brentq(lambda x: x, 0.0, 1.0) == scipy_brentq(lambda x: x, 0.0, 1.0) == 0.0


def _min_problems(n=300):
    rng = np.random.default_rng(7)
    out = []
    for i in range(n):
        c = rng.uniform(-2, 2, size=4)
        kind = i % 4
        if kind == 0:
            f = lambda x, c=c: (x - c[0]) ** 2 + c[1]  # noqa: E731
        elif kind == 1:
            f = lambda x, c=c: math.sin(3 * x + c[0]) + 0.1 * c[1] * x  # noqa: E731
        elif kind == 2:
            f = lambda x, c=c: -math.exp(-((x - c[0]) ** 2)) if abs(x - c[0]) < 0.7 else 1e300  # noqa: E731
        else:
            f = lambda x, c=c: abs(x - c[0]) ** 1.5 + (math.inf if x > c[1] + 2.5 else 0.0)  # noqa: E731
        lo, hi = sorted(rng.uniform(-4, 4, size=2))
        xatol = float(10.0 ** rng.uniform(-9, -1))
        out.append((f, lo, hi, xatol))
    return out


def test_bounded_minimum_is_scipys_to_the_last_bit():
    for f, lo, hi, xatol in _min_problems():
        calls_a, calls_b = [], []
        ra = minimize_scalar_bounded(lambda x: (calls_a.append((type(x), x)), f(x))[1], (lo, hi), xatol=xatol)
        rb = minimize_scalar(lambda x: (calls_b.append((type(x), x)), f(x))[1], bounds=(lo, hi), method="bounded",
                             options={"xatol": xatol})
        assert ra.x == rb.x and ra.fun == rb.fun and ra.nfev == rb.nfev and ra.status == rb.status, (lo, hi, xatol)
        assert calls_a == calls_b  # the same points, of the same types
        assert type(ra.x) is type(rb.x)


def test_bounded_minimum_limits_and_errors():
    r = minimize_scalar_bounded(lambda x: (x - 1.0) ** 2, (0.0, 3.0), xatol=1e-12, maxiter=5)
    assert r.status == 1 and not r.success and r.nfev == 5
    with pytest.raises(ValueError):
        minimize_scalar_bounded(lambda x: x, (1.0, 0.0))
    with pytest.raises(ValueError):
        minimize_scalar_bounded(lambda x: x, (0.0, math.inf))

"""Brent's methods for one variable: a bracketed root (:func:`brentq`) and a bounded minimum
(:func:`minimize_scalar_bounded`), the same arithmetic as SciPy's, without importing
``scipy.optimize``.

Why: importing ``scipy.optimize`` loads most of SciPy (linear algebra, FFT, sparse matrices)
and took 0.25-0.5 s of the 0.9 s from launching ``orcscreen run`` to its first stored case
(README, Performance), while orcscreen uses two of its functions. Both are transcribed step for
step, with the same operations in the same order, so that every result is the same to the last
bit as SciPy's (tests/test_brent.py checks this against SciPy itself on many functions):

* :func:`brentq` follows SciPy's ``scipy/optimize/Zeros/brentq.c`` (SciPy 1.17; Brent's
  method with inverse quadratic interpolation, the "van Wijngaarden-Dekker-Brent" variant of
  Press et al.) and its Python wrapper (checks of the tolerances, NaN raises ValueError,
  non-convergence raises RuntimeError);
* :func:`minimize_scalar_bounded` follows ``scipy.optimize._optimize._minimize_scalar_bounded``
  (SciPy 1.17; Brent's bounded golden-section and parabolic search, Forsythe, Malcolm and
  Moler's ``fmin``), with the same numpy scalar types, so that the function sees the same values.

Sources: R. P. Brent, *Algorithms for Minimization without Derivatives*, Prentice-Hall 1973,
ch. 4 and 5; SciPy (BSD-3-Clause licence, Copyright (c) 2001-2002 Enthought, Inc. and
2003-2024 SciPy Developers), whose code these two functions transcribe.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["brentq", "minimize_scalar_bounded", "BoundedMinimum", "RTOL_MIN"]

#: Smallest relative tolerance brentq accepts: 4 machine epsilons (SciPy's ``_rtol``).
RTOL_MIN = 4 * float(np.finfo(float).eps)


def brentq(f, a: float, b: float, xtol: float = 2e-12, rtol: float = RTOL_MIN, maxiter: int = 100) -> float:
    """A root of f in [a, b], where f(a) and f(b) differ in sign, to |x - x*| <= xtol + rtol |x*|
    (the tolerance of SciPy's ``brentq``, whose arithmetic this is). Raises ValueError for a
    bad tolerance, no sign change or a NaN value of f, RuntimeError when maxiter iterations do
    not converge."""
    if xtol <= 0:
        raise ValueError(f"xtol too small ({xtol:g} <= 0)")
    if rtol < RTOL_MIN:
        raise ValueError(f"rtol too small ({rtol:g} < {RTOL_MIN:g})")
    maxiter = int(maxiter)

    def fx(x: float) -> float:
        v = f(x)
        if np.isnan(v):
            raise ValueError(f"The function value at x={x} is NaN; solver cannot continue.")
        return float(v)

    xpre, xcur = float(a), float(b)
    xblk = fblk = spre = scur = 0.0
    fpre = fx(xpre)
    fcur = fx(xcur)
    if fpre == 0:
        return xpre
    if fcur == 0:
        return xcur
    if math.copysign(1.0, fpre) == math.copysign(1.0, fcur):
        raise ValueError("f(a) and f(b) must have different signs")
    for _ in range(maxiter):
        if fpre != 0 and fcur != 0 and math.copysign(1.0, fpre) != math.copysign(1.0, fcur):
            xblk = xpre
            fblk = fpre
            spre = scur = xcur - xpre
        if abs(fblk) < abs(fcur):
            xpre = xcur
            xcur = xblk
            xblk = xpre
            fpre = fcur
            fcur = fblk
            fblk = fpre
        delta = (xtol + rtol * abs(xcur)) / 2
        sbis = (xblk - xcur) / 2
        if fcur == 0 or abs(sbis) < delta:
            return xcur
        if abs(spre) > delta and abs(fcur) < abs(fpre):
            if xpre == xblk:  # interpolate
                stry = -fcur * (xcur - xpre) / (fcur - fpre)
            else:  # extrapolate
                dpre = (fpre - fcur) / (xpre - xcur)
                dblk = (fblk - fcur) / (xblk - xcur)
                stry = -fcur * (fblk * dblk - fpre * dpre) / (dblk * dpre * (fblk - fpre))
            a_, b_ = abs(spre), 3 * abs(sbis) - delta
            if 2 * abs(stry) < (a_ if a_ < b_ else b_):  # good short step (C's MIN)
                spre = scur
                scur = stry
            else:  # bisect
                spre = sbis
                scur = sbis
        else:  # bisect
            spre = sbis
            scur = sbis
        xpre = xcur
        fpre = fcur
        if abs(scur) > delta:
            xcur += scur
        else:
            xcur += delta if sbis > 0 else -delta
        fcur = fx(xcur)
    raise RuntimeError(f"Failed to converge after {maxiter} iterations, value is {xcur}.")


@dataclass(frozen=True)
class BoundedMinimum:
    """Result of :func:`minimize_scalar_bounded`: x and fun (numpy scalars, as SciPy returns
    them), nfev evaluations, status 0 (found), 1 (maxiter reached) or 2 (a NaN)."""

    x: float
    fun: float
    nfev: int
    status: int

    @property
    def success(self) -> bool:
        return self.status == 0


def minimize_scalar_bounded(func, bounds: tuple[float, float], xatol: float = 1e-5, maxiter: int = 500) -> BoundedMinimum:
    """The minimum of func on bounds = (lo, hi) by Brent's bounded method, to xatol: the
    arithmetic and the numpy scalar types of SciPy's ``minimize_scalar(method="bounded")``.
    Raises ValueError for bounds that are not two finite numbers in order."""
    if len(bounds) != 2:
        raise ValueError("bounds must have two elements.")
    x1, x2 = bounds
    if not (np.isscalar(x1) and np.isfinite(x1) and np.isscalar(x2) and np.isfinite(x2)):
        raise ValueError("Optimization bounds must be finite scalars.")
    if x1 > x2:
        raise ValueError("The lower bound exceeds the upper bound.")
    maxfun = maxiter
    flag = 0
    sqrt_eps = np.sqrt(2.2e-16)
    golden_mean = 0.5 * (3.0 - np.sqrt(5.0))
    a, b = x1, x2
    fulc = a + golden_mean * (b - a)
    nfc, xf = fulc, fulc
    rat = e = 0.0
    x = xf
    fx = func(x)
    num = 1
    fu = np.inf
    ffulc = fnfc = fx
    xm = 0.5 * (a + b)
    tol1 = sqrt_eps * np.abs(xf) + xatol / 3.0
    tol2 = 2.0 * tol1
    while np.abs(xf - xm) > (tol2 - 0.5 * (b - a)):
        golden = 1
        if np.abs(e) > tol1:  # a parabolic fit
            golden = 0
            r = (xf - nfc) * (fx - ffulc)
            q = (xf - fulc) * (fx - fnfc)
            p = (xf - fulc) * q - (xf - nfc) * r
            q = 2.0 * (q - r)
            if q > 0.0:
                p = -p
            q = np.abs(q)
            r = e
            e = rat
            if (np.abs(p) < np.abs(0.5 * q * r)) and (p > q * (a - xf)) and (p < q * (b - xf)):
                rat = (p + 0.0) / q
                x = xf + rat
                if ((x - a) < tol2) or ((b - x) < tol2):
                    si = np.sign(xm - xf) + ((xm - xf) == 0)
                    rat = tol1 * si
            else:
                golden = 1
        if golden:  # a golden-section step
            if xf >= xm:
                e = a - xf
            else:
                e = b - xf
            rat = golden_mean * e
        si = np.sign(rat) + (rat == 0)
        x = xf + si * np.maximum(np.abs(rat), tol1)
        fu = func(x)
        num += 1
        if fu <= fx:
            if x >= xf:
                a = xf
            else:
                b = xf
            fulc, ffulc = nfc, fnfc
            nfc, fnfc = xf, fx
            xf, fx = x, fu
        else:
            if x < xf:
                a = x
            else:
                b = x
            if (fu <= fnfc) or (nfc == xf):
                fulc, ffulc = nfc, fnfc
                nfc, fnfc = x, fu
            elif (fu <= ffulc) or (fulc == xf) or (fulc == nfc):
                fulc, ffulc = x, fu
        xm = 0.5 * (a + b)
        tol1 = sqrt_eps * np.abs(xf) + xatol / 3.0
        tol2 = 2.0 * tol1
        if num >= maxfun:
            flag = 1
            break
    if np.isnan(xf) or np.isnan(fx) or np.isnan(fu):
        flag = 2
    fun = np.asarray(fx)[()]
    return BoundedMinimum(np.reshape(xf, fun.shape)[()], fun, num, flag)

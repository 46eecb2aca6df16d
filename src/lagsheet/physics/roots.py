"""Roots of many monotone scalar functions at once: Chandrupatla's bracketing method.

T. R. Chandrupatla, "A new hybrid quadratic/bisection algorithm for finding the zero of a
nonlinear function without using derivatives", Advances in Engineering Software 28 (1997)
145-149: inverse quadratic interpolation through the last three points while it is safe,
bisection otherwise, the bracket kept throughout.

This is the algorithm, step for step and in the same floating-point order, of scipy's
``scipy.optimize.elementwise.find_root`` (tests/reference/test_roots.py holds the two
bit-identical on random functions and on the surface balance), without its general
machinery: importing that module takes about 0.7 s of CPU, longer than the engine needs for
a thousand lines, and its loop adds its own cost to every iteration. Only an absolute
tolerance on x is offered, as the engine uses no other.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

CONVERGED, SIGN_ERROR, MAX_ITERATIONS, NOT_FINITE = 0, -1, -2, -3  # scipy's status codes


def chandrupatla(func: Callable, a: np.ndarray, b: np.ndarray, args: tuple = (), *, xatol: float,
                 maxiter: int = 200) -> tuple[np.ndarray, np.ndarray]:
    """The roots of ``func(x, *args)`` (elementwise) bracketed by ``a`` and ``b``.

    Returns (x, status): status 0 where x is within ``xatol`` of a root (or f(x) is exactly 0),
    -1 where f has the same sign at both ends of the bracket (x is NaN), -2 where ``maxiter``
    iterations did not reach the tolerance, -3 where x or f is not finite (x is NaN). ``func``
    is called with the still-unsettled elements only, ``args`` cut to them alike.
    """
    x1, x2 = np.array(a, dtype=float), np.array(b, dtype=float)
    f1, f2 = np.asarray(func(x1, *args), dtype=float), np.asarray(func(x2, *args), dtype=float)
    n = x1.size
    x, status = np.full(n, np.nan), np.zeros(n, dtype=np.int32)
    w = {"x1": x1, "f1": f1, "x2": x2, "f2": f2, "t": np.full(n, 0.5), "args": list(args),
         "active": np.arange(n)}
    if not _settle(w, x, status, xatol):
        return x, status
    for _ in range(maxiter):
        xt = w["x1"] + w["t"] * (w["x2"] - w["x1"])
        ft = np.asarray(func(xt, *w["args"]), dtype=float)
        # keep the bracket: the new point replaces the end of its own sign
        x3, f3 = w["x2"].copy(), w["f2"].copy()
        j = np.sign(ft) == np.sign(w["f1"])
        x3[j], f3[j] = w["x1"][j], w["f1"][j]
        nj = ~j
        w["x2"][nj], w["f2"][nj] = w["x1"][nj], w["f1"][nj]
        w["x1"], w["f1"], w["x3"], w["f3"] = xt, ft, x3, f3
        if not _settle(w, x, status, xatol):
            return x, status
        w["t"] = _next_t(w)
    status[w["active"]] = MAX_ITERATIONS
    x[w["active"]] = w["xmin"]
    return x, status


def _settle(w: dict, x: np.ndarray, status: np.ndarray, xatol: float) -> bool:
    """Record the elements that are done and drop them from ``w``; False when none is left."""
    x1, f1, x2, f2 = w["x1"], w["f1"], w["x2"], w["f2"]
    i = np.abs(f1) < np.abs(f2)
    xmin, fmin = np.where(i, x1, x2), np.where(i, f1, f2)
    code = np.full(x1.size, 1, dtype=np.int32)  # 1: go on
    code[np.abs(fmin) <= 0.0] = CONVERGED
    bad = (np.sign(f1) == np.sign(f2)) & (code == 1)
    code[bad], xmin[bad] = SIGN_ERROR, np.nan
    bad = (~(np.isfinite(x1) & np.isfinite(x2)) | (np.isnan(f1) & np.isnan(f2))) & (code == 1)
    code[bad], xmin[bad] = NOT_FINITE, np.nan
    w["dx"] = np.abs(x2 - x1)
    w["tol"] = np.abs(xmin) * 0.0 + xatol  # NaN where xmin is: a sign error is not 'converged' below
    code[w["dx"] < w["tol"]] = CONVERGED
    stop = code != 1
    if stop.any():
        done = w["active"][stop]
        x[done], status[done] = xmin[stop], code[stop]
        keep = ~stop
        for key in ("x1", "f1", "x2", "f2", "x3", "f3", "t", "dx", "tol", "active"):
            if key in w and np.ndim(w[key]) > 0:
                w[key] = w[key][keep]
        w["args"] = [arg[keep] for arg in w["args"]]
        xmin = xmin[keep]
    w["xmin"] = xmin
    return w["active"].size > 0


def _next_t(w: dict) -> np.ndarray:
    """Where the next point lies in the bracket: inverse quadratic interpolation where it is safe
    (Chandrupatla's test on ξ and Φ), the middle otherwise, never closer to an end than half the
    tolerance."""
    x1, f1, x2, f2, x3, f3 = w["x1"], w["f1"], w["x2"], w["f2"], w["x3"], w["f3"]
    xi1 = (x1 - x2) / (x3 - x2)
    with np.errstate(divide="ignore", invalid="ignore"):
        phi1 = (f1 - f2) / (f3 - f2)
    alpha = (x3 - x1) / (x2 - x1)
    j = ((1 - np.sqrt(1 - xi1)) < phi1) & (phi1 < np.sqrt(xi1))
    f1j, f2j, f3j, alphaj = f1[j], f2[j], f3[j], alpha[j]
    t = np.full_like(alpha, 0.5)
    t[j] = (f1j / (f1j - f2j) * f3j / (f3j - f2j)
            - alphaj * f1j / (f3j - f1j) * f2j / (f2j - f3j))
    tl = 0.5 * w["tol"] / w["dx"]
    return np.clip(t, tl, 1 - tl)

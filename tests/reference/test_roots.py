"""lagsheet's Chandrupatla root finder against scipy's (``scipy.optimize.elementwise.find_root``):
the same algorithm step for step, so the same roots bit for bit and the same status, on random
monotone functions, on brackets that hold no root, and on the surface balance of the engine."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize.elementwise import find_root

from lagsheet.physics import balance
from lagsheet.physics.roots import chandrupatla

TOL = {"xrtol": 0.0, "fatol": 0.0, "frtol": 0.0}


def _both(f, a, b, args, xatol, maxiter=200):
    ours = chandrupatla(f, a, b, args, xatol=xatol, maxiter=maxiter)
    theirs = find_root(f, (a, b), args=args, tolerances={"xatol": xatol, **TOL}, maxiter=maxiter)
    return ours, theirs


@pytest.mark.parametrize("seed", range(5))
def test_random_monotone_functions_give_scipys_roots_bit_for_bit(seed):
    """f(x) = c·(x − r)·(1 + d·x²) + e·(x − r)³ on brackets around r (and some not around it): every root,
    status and the order of failures equal scipy's, for tolerances from 1e-3 to 1e-13."""
    rng = np.random.default_rng(seed)
    n = 4000
    r = rng.uniform(-5, 5, n)
    c, d, e = rng.uniform(0.01, 100, n), rng.uniform(0, 3, n), rng.uniform(0, 2, n)
    a = r - rng.uniform(0, 4, n) * rng.choice([1.0, 1.0, 1.0, -0.5], n)  # a quarter miss the root
    b = r + rng.uniform(0, 4, n)

    def f(x, c, d, e, r):
        return c * (x - r) * (1 + d * x * x) + e * (x - r) ** 3

    for xatol in (1e-3, 1e-8, 1e-11, 1e-13):
        (x, status), res = _both(f, a, b, (c, d, e, r), xatol)
        assert np.array_equal(status, res.status), xatol
        assert np.array_equal(x, res.x, equal_nan=True), xatol
        assert (status == -1).sum() > n // 10 and (status == 0).sum() > n // 2


def test_too_few_iterations_and_non_finite_values_as_scipy():
    """maxiter reached: status -2 with the best point so far; NaN function values: status -3."""
    a, b = np.full(50, -1.0), np.linspace(1.0, 3.0, 50)
    (x, status), res = _both(lambda x: np.tanh(x - 0.3) + 0.01 * x, a, b, (), 1e-14, maxiter=3)
    assert np.array_equal(status, res.status) and (status == -2).all()
    assert np.array_equal(x, res.x)
    (x, status), res = _both(lambda x: np.where(x > 0.5, np.nan, x), a, b, (), 1e-10)
    assert np.array_equal(status, res.status) and np.array_equal(x, res.x, equal_nan=True)


def _random_system(n: int, seed: int):
    """n random lines: every shape, hot and cold, wind or still, one or two layers, some in the sun."""
    from lagsheet.physics.balance import System
    from lagsheet.physics.layers import CYLINDER, FLAT, SPHERE, MaterialTable
    from lagsheet.physics.surface import PIPE, RISER, SPHERE_SHAPE, TOP, UNDERSIDE, WALL
    from lagsheet.workbook import library

    rng = np.random.default_rng(seed)
    mats = list(library.materials().values())[:6]
    table = MaterialTable.build({m.name: (np.array(m.mean_temperatures), np.array(m.conductivities))
                                 for m in mats})
    shape = rng.choice([PIPE, RISER, SPHERE_SHAPE, TOP, UNDERSIDE, WALL], n)
    geometry = np.select([np.isin(shape, [PIPE, RISER]), shape == SPHERE_SHAPE], [CYLINDER, SPHERE], FLAT)
    t_air = rng.uniform(250, 310, n)
    thickness = rng.choice([0.0, 0.013, 0.025, 0.05, 0.1, 0.2], (n, 2))
    thickness[:, 0] = np.maximum(thickness[:, 0], 0.013)
    return System(geometry=geometry, shape=shape, t_operating=t_air + rng.uniform(-80, 500, n), t_air=t_air,
                  t_surroundings=t_air - rng.uniform(0, 10, n), wind=rng.choice([0.0, 1.0, 5.0], n),
                  emissivity=rng.uniform(0.05, 0.95, n), r_inner=rng.uniform(0.01, 0.6, n),
                  height=rng.uniform(0.5, 10, n), thickness=thickness,
                  material=rng.integers(0, len(mats), (n, 2)), flow_length=rng.uniform(0.5, 5, n),
                  absorbed=np.where(rng.random(n) < 0.3, rng.uniform(0, 600, n), 0.0)), table


@pytest.mark.parametrize("narrow", [True, False])
def test_the_engine_with_scipys_root_finder_gives_the_same_results(monkeypatch, narrow):
    """The surface balance of 3,000 random lines (the engine's narrow brackets, or all of [0, 1]) solved
    with scipy's find_root in place of ours: every heat flux and face temperature bit for bit."""
    s, table = _random_system(3000, 11)
    if not narrow:
        monkeypatch.setattr(balance, "BRACKET", (0.0, np.inf))  # every bracket [0, 1]
    ours = balance.solve(s, table)

    def scipy_roots(func, a, b, args=(), *, xatol, maxiter=200):
        res = find_root(func, (a, b), args=args, tolerances={"xatol": xatol, **TOL}, maxiter=maxiter)
        return res.x, res.status

    monkeypatch.setattr(balance, "chandrupatla", scipy_roots)
    theirs = balance.solve(s, table)
    assert ours.converged.all() and np.array_equal(ours.converged, theirs.converged)
    assert np.array_equal(ours.q, theirs.q) and np.array_equal(ours.faces, theirs.faces)

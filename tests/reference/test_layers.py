"""Conduction through k(T) layers against closed forms and scipy quadrature/root finding.

Outside sources: the ASTM C680 layer equations as written in REFERENCES.md (flat
q'' = (1/L) int k dT; cylinder q' = 2 pi int k dT / ln(r2/r1); sphere
Q = 4 pi r1 r2 int k dT / (r2 - r1)); for a linear k(T) the integral mean equals k at the
arithmetic mean temperature (REFERENCES.md); scipy.integrate.quad and
scipy.optimize.brentq for piecewise-linear curves (numpy.interp).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq

from lagsheet.physics.layers import (
    CYLINDER,
    FLAT,
    SPHERE,
    MaterialTable,
    geometric_lengths,
    march,
    outer_radius,
)
from lagsheet.workbook.library import materials

# Linear k(T) = A + B T [W/(m K)], T in K; given on knots that lie on the line.
A, B = 0.02, 1.0e-4
T_KNOTS = np.array([250.0, 400.0, 550.0, 700.0, 850.0])


def k_lin(t):
    return A + B * np.asarray(t, dtype=float)


def int_k_lin(t1, t2):
    """Closed form of int_{T2}^{T1} (A + B T) dT."""
    return A * (t1 - t2) + 0.5 * B * (t1**2 - t2**2)


@pytest.fixture(scope="module")
def linear():
    return MaterialTable.build({"x": (T_KNOTS, k_lin(T_KNOTS))})


@pytest.fixture(scope="module")
def builtin():
    mats = materials()
    curves = {name: (np.array(m.mean_temperatures), np.array(m.conductivities))
              for name, m in mats.items()}
    return MaterialTable.build(curves), curves


def _pairs(lo, hi, n=9):
    t = np.linspace(lo, hi, n)
    t1, t2 = np.meshgrid(t, t)
    return t1.ravel(), t2.ravel()


def test_linear_potential_difference_is_closed_form(linear):
    """For linear k(T), Phi(T1) - Phi(T2) equals A(T1 - T2) + B/2 (T1^2 - T2^2)."""
    t1, t2 = _pairs(250.0, 850.0)
    m = np.zeros(t1.size, dtype=int)
    got = linear.potential(m, t1) - linear.potential(m, t2)
    np.testing.assert_allclose(got, int_k_lin(t1, t2), rtol=1e-12, atol=1e-10)


def test_linear_conductivity_is_the_line(linear):
    """conductivity() reproduces a linear k(T) between its knots."""
    t = np.linspace(250.0, 850.0, 61)
    np.testing.assert_allclose(linear.conductivity(np.zeros(t.size, dtype=int), t), k_lin(t),
                               rtol=1e-13)


def test_linear_mean_conductivity_is_k_at_mean_temperature(linear):
    """For linear k(T) the integral-mean k equals k at the arithmetic mean of the face temperatures."""
    # ASTM C680 approach, REFERENCES.md: "for a linear k(T) the integral mean equals k at
    # the arithmetic mean temperature"
    t1, t2 = _pairs(250.0, 850.0)
    m = np.zeros(t1.size, dtype=int)
    np.testing.assert_allclose(linear.mean_conductivity(m, t1, t2), k_lin(0.5 * (t1 + t2)),
                               rtol=1e-11)


def test_builtin_potential_matches_quadrature(builtin):
    """Phi differences of every built-in piecewise curve equal scipy quad of numpy.interp."""
    table, curves = builtin
    for name, (t, k) in curves.items():
        m = table.index(name)
        t1, t2 = _pairs(t[0], t[-1], 7)
        got = table.potential(np.full(t1.size, m), t1) - table.potential(np.full(t1.size, m), t2)
        want = np.array([
            quad(np.interp, b, a, args=(t, k), points=t[(t > min(a, b)) & (t < max(a, b))],
                 epsabs=1e-13, epsrel=1e-13)[0]
            for a, b in zip(t1, t2, strict=True)
        ])
        np.testing.assert_allclose(got, want, rtol=1e-10, atol=1e-10, err_msg=name)


def test_builtin_conductivity_and_mean_match_interp(builtin):
    """conductivity() is numpy.interp of the knots and mean_conductivity() the quad mean."""
    table, curves = builtin
    for name, (t, k) in curves.items():
        m = table.index(name)
        tt = np.linspace(t[0], t[-1], 37)
        np.testing.assert_allclose(table.conductivity(np.full(tt.size, m), tt), np.interp(tt, t, k),
                                   rtol=1e-12, err_msg=name)
        t1, t2 = t[0] + 3.7, t[-1] - 1.3
        want = quad(np.interp, t2, t1, args=(t, k), points=t[1:-1], epsabs=1e-13,
                    epsrel=1e-13)[0] / (t1 - t2)
        got = table.mean_conductivity(np.array([m]), np.array([t1]), np.array([t2]))[0]
        assert got == pytest.approx(want, rel=1e-10), name


def test_mean_conductivity_of_equal_faces_is_local_k(builtin):
    """With both faces at one temperature the mean conductivity is k there (numpy.interp)."""
    table, curves = builtin
    for name, (t, k) in curves.items():
        m = table.index(name)
        tm = np.array([0.3 * t[0] + 0.7 * t[-1]])
        got = table.mean_conductivity(np.array([m]), tm, tm)[0]
        assert got == pytest.approx(float(np.interp(tm[0], t, k)), rel=1e-12), name


def test_potential_inverse_round_trip(builtin):
    """temperature() inverts potential() for every material, inside and outside its knots."""
    table, _ = builtin
    t = np.concatenate((np.linspace(5.0, 3990.0, 400), np.linspace(150.0, 900.0, 301)))
    for m in range(len(table.names)):
        mm = np.full(t.size, m)
        back = table.temperature(mm, table.potential(mm, t))
        np.testing.assert_allclose(back, t, rtol=1e-10, err_msg=table.names[m])


# --- geometry and marching --------------------------------------------------------------


def test_cylinder_geometric_lengths_follow_the_log_law():
    """Cylinder g per layer is r_o ln(r2/r1), from q' = 2 pi int k dT / ln(r2/r1) with q' = 2 pi r_o q."""
    r0 = np.array([0.0302, 0.0571])
    thick = np.array([[0.04, 0.03], [0.05, 0.0]])
    radii = outer_radius(np.array([CYLINDER, CYLINDER]), r0, thick)
    np.testing.assert_allclose(radii, [[0.0302, 0.0702, 0.1002], [0.0571, 0.1071, 0.1071]])
    g = geometric_lengths(np.array([CYLINDER, CYLINDER]), radii)
    ro = radii[:, -1:]
    np.testing.assert_allclose(g[0], ro[0] * np.log(radii[0, 1:] / radii[0, :-1]), rtol=1e-14)
    assert g[1, 0] == pytest.approx(ro[1, 0] * np.log(0.1071 / 0.0571), rel=1e-14)
    assert g[1, 1] == 0.0  # a zero thickness is no layer


def test_cylinder_march_matches_closed_form(linear):
    """One cylindrical layer of linear k: march gives the outer face solving 2 pi int k dT / ln(r2/r1) = q'."""
    r1 = np.array([0.0302, 0.0571, 0.1683])
    r2 = r1 + np.array([0.025, 0.05, 0.1])
    t_in = np.array([400.0, 600.0, 800.0])
    q_line = np.array([30.0, 80.0, 150.0])  # W/m
    radii = np.stack((r1, r2), axis=1)
    geom = np.full(3, CYLINDER)
    g = geometric_lengths(geom, radii)
    faces = march(linear, np.zeros((3, 1), dtype=int), g, t_in, q_line / (2 * np.pi * r2))
    # closed form: A(T1 - T2) + B/2 (T1^2 - T2^2) = q' ln(r2/r1) / (2 pi), a quadratic in T2
    c = A * t_in + 0.5 * B * t_in**2 - q_line * np.log(r2 / r1) / (2 * np.pi)
    t_out = (-A + np.sqrt(A * A + 2 * B * c)) / B
    np.testing.assert_allclose(faces[:, 0], t_in)
    np.testing.assert_allclose(faces[:, 1], t_out, rtol=1e-12)
    # and the heat rate back from the faces
    np.testing.assert_allclose(2 * np.pi * int_k_lin(faces[:, 0], faces[:, 1]) / np.log(r2 / r1),
                               q_line, rtol=1e-10)


def _int_k(t, k, a, b):
    """int_b^a of the piecewise-linear k (numpy.interp), scipy quad."""
    inside = t[(t > min(a, b)) & (t < max(a, b))]
    return quad(np.interp, b, a, args=(t, k), points=inside, epsabs=1e-13, epsrel=1e-13)[0]


def test_two_cylindrical_layers_in_series_match_brentq(builtin):
    """Calcium silicate under mineral wool: march reproduces a hand-built series solve (quad + brentq)."""
    table, curves = builtin
    inner, outer = "calcium silicate", "mineral wool"
    (ti, ki), (to, ko) = curves[inner], curves[outer]
    r = np.array([0.0573, 0.0573 + 0.05, 0.0573 + 0.05 + 0.04])
    t_in, t_out = 690.0, 320.0  # both layers stay inside their materials' points

    def q1(tm):
        return 2 * np.pi * _int_k(ti, ki, t_in, tm) / np.log(r[1] / r[0])

    def q2(tm):
        return 2 * np.pi * _int_k(to, ko, tm, t_out) / np.log(r[2] / r[1])

    t_mid = brentq(lambda tm: q1(tm) - q2(tm), t_out, t_in, xtol=1e-12, rtol=1e-14)
    q_line = q1(t_mid)
    assert to[0] <= t_out and t_mid <= to[-1] and ti[0] <= t_mid and t_in <= ti[-1]

    mats = np.array([[table.index(inner), table.index(outer)]])
    radii = outer_radius(np.array([CYLINDER]), r[:1], np.diff(r)[None, :])
    g = geometric_lengths(np.array([CYLINDER]), radii)
    faces = march(table, mats, g, np.array([t_in]), np.array([q_line / (2 * np.pi * r[2])]))
    np.testing.assert_allclose(faces[0], [t_in, t_mid, t_out], rtol=0, atol=1e-7)


def test_flat_layer_march_matches_brentq(builtin):
    """A flat cellular glass layer: march gives the face where (1/L) int k dT equals the flux."""
    table, curves = builtin
    t, k = curves["cellular glass"]
    length, t_in, q = 0.06, 420.0, 150.0
    want = brentq(lambda x: _int_k(t, k, t_in, x) / length - q, 150.0, t_in, xtol=1e-12, rtol=1e-14)
    radii = np.array([[0.0, length]])
    g = geometric_lengths(np.array([FLAT]), radii)
    assert g[0, 0] == pytest.approx(length, rel=1e-14)
    faces = march(table, np.array([[table.index("cellular glass")]]), g, np.array([t_in]),
                  np.array([q]))
    assert faces[0, 1] == pytest.approx(want, abs=1e-7)


def test_sphere_layer_march_matches_brentq(builtin):
    """A spherical mineral wool shell: march gives the face where 4 pi r1 r2 int k dT/(r2 - r1) equals Q."""
    table, curves = builtin
    t, k = curves["mineral wool"]
    r1, r2, t_in, big_q = 0.5, 0.6, 600.0, 400.0  # W
    want = brentq(lambda x: 4 * np.pi * r1 * r2 * _int_k(t, k, t_in, x) / (r2 - r1) - big_q,
                  283.2, t_in, xtol=1e-12, rtol=1e-14)
    radii = np.array([[r1, r2]])
    g = geometric_lengths(np.array([SPHERE]), radii)
    faces = march(table, np.array([[table.index("mineral wool")]]), g, np.array([t_in]),
                  np.array([big_q / (4 * np.pi * r2**2)]))
    assert faces[0, 1] == pytest.approx(want, abs=1e-7)

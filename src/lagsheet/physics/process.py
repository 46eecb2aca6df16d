r"""Process limits along a line: outlet temperature, steam condensate, cool-down, freezing.

Pure array functions in SI (kelvin, pascal, watt, kilogram, metre, second): every
argument broadcasts, one call serves many lines, regimes are chosen by ``np.where``.
The only Python loops are fixed ones over marching steps or quadrature nodes; fluid
properties come from :mod:`lagsheet.physics.properties` (CoolProp, once per distinct state).

Heat-loss coefficient
    A line's heat loss is written Q′ = U′ (T − T_air), with U′ [W/(m·K)] the heat loss
    per length divided by the difference between the fluid and the air (per area for
    flats, whole for spheres, or × a length or area for a whole item, UA [W/K]).
    U′ depends on T (conductivity k(T), free convection, radiation), so the functions
    that follow the fluid take a callable ``u_of_t(T) -> U′``: it receives an array of
    fluid temperatures, one per line, and returns U′ of the same shape.
    :func:`loss_coefficient` builds one from the engine's surface balance
    (:func:`lagsheet.physics.balance.solve`).

Which parts of ISO 12241 these follow
    The clause numbers and formulas are those listed in ``REFERENCES.md`` of the design
    folder (clause numbers from the 1998 contents, formulas marked there as recalled
    from memory, not read from the standard). The tests check every function against
    closed forms, scipy and CoolProp, not against the text of the standard.

    - 5.1, temperature change along a pipe with a flowing medium:
      θ_out = θ_a + (θ_in − θ_a) exp(−U′L/(ṁ c_p)) — :func:`outlet_temperature_closed`;
      :func:`outlet_temperature_marching` integrates the same balance with U′(T).
    - 5.2, cooling of pipes, vessels and containers with a stagnant medium:
      t = (Σ m c_p / U′) ln((θ_i − θ_a)/(θ_f − θ_a)) — :func:`cooling_time`, which
      integrates the same balance with U′(T), and :func:`vessel_cooldown`.
    - 6.1, time to freezing: cool-down to 0 °C, then t_f = f ρ V h_if / (U′ (0 °C − θ_a))
      to freeze a fraction f of the water — :func:`freeze_time`.

Steam condensate (:func:`condensate_kg_per_h`) is the heat loss divided by the latent
heat of vaporisation, an energy balance on saturated steam, not a clause of the standard.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import replace
from typing import NamedTuple

import numpy as np

from .balance import System, solve
from .candidates import heat_rate
from .layers import MaterialTable
from .properties import P_ATM, FluidProperties, Saturation, fluid_properties, saturation

__all__ = ["FluidProperties", "Saturation", "fluid_properties", "saturation"]  # re-exported

Coefficient = Callable[[np.ndarray], np.ndarray]

T_ICE = 273.15  # K, 0 °C: melting point of ice at about 101 325 Pa
T_TRIPLE_WATER = 273.16  # K, triple point of water (ITS-90); CoolProp's water starts here
H_FUSION_ICE = 333.55e3  # J/kg, latent heat of fusion of ice at 0 °C (handbook value, from memory)
FREEZE_FRACTION = 0.25  # fraction of the water allowed to freeze (common practice)
MARCH_STEPS = 20  # default Runge-Kutta steps along a line (see outlet_temperature_marching)
NODES = 24  # default Gauss-Legendre nodes of the cool-down integral (see cooling_time)


# --------------------------------------------------------------------------- steam


def condensate_kg_per_h(heat_loss_W, h_fg):
    """Steam condensed by a line's heat loss, ṁ_c = 3600 Q / h_fg [kg/h].

    Parameters
    ----------
    heat_loss_W : array_like
        Heat loss [W] (of a line, or per metre for kg/(h·m)); a heat gain (negative)
        condenses nothing and gives 0.
    h_fg : array_like
        Latent heat of vaporisation at the steam pressure [J/kg] (:func:`saturation`).

    Returns
    -------
    ndarray
        Condensate [kg/h]; NaN where h_fg is not positive.

    Notes
    -----
    Valid for saturated steam: all the heat lost comes from condensation. Superheated
    steam first loses its superheat, so this overstates its condensate.
    """
    q, h = np.broadcast_arrays(np.asarray(heat_loss_W, dtype=float), np.asarray(h_fg, dtype=float))
    ok = h > 0
    return np.where(ok, 3600.0 * np.maximum(q, 0.0) / np.where(ok, h, 1.0), np.nan)


# --------------------------------------------------------------------------- flowing line


def outlet_temperature_closed(t_in, t_air, u_line, length, m_dot, cp):
    """Outlet temperature of a flowing line with a constant heat-loss coefficient.

    θ_out = θ_a + (θ_in − θ_a) · exp(−U′ L / (ṁ c_p)), the solution of
    ṁ c_p dθ/dx = −U′ (θ − θ_a) with U′ and c_p constant.

    Parameters
    ----------
    t_in : array_like
        Fluid inlet temperature [K].
    t_air : array_like
        Ambient air temperature [K].
    u_line : array_like
        Heat-loss coefficient per length U′ [W/(m·K)] (heat loss per length / (T − T_air)).
    length : array_like
        Line length [m].
    m_dot : array_like
        Mass flow [kg/s]; must be positive.
    cp : array_like
        Fluid specific heat [J/(kg·K)], e.g. :func:`fluid_properties` at the mean
        temperature.

    Returns
    -------
    ndarray
        θ_out [K]; NaN where ṁ or c_p is not positive (a stagnant line: use
        :func:`cooling_time`).

    Notes
    -----
    Single-phase fluid, no heat from friction, fluid well mixed across the pipe.
    ISO 12241 clause 5.1 (as recalled in REFERENCES.md).
    """
    t_in, t_air, u, L, m, c = np.broadcast_arrays(*(np.asarray(a, dtype=float)
                                                     for a in (t_in, t_air, u_line, length, m_dot, cp)))
    ok = (m > 0) & (c > 0)
    ntu = np.where(ok, u * L / np.where(ok, m * c, 1.0), np.nan)
    return t_air + (t_in - t_air) * np.exp(-ntu)


def temperature_profile(t_in, t_air, u_of_t: Coefficient, length, m_dot, cp,
                        steps: int = MARCH_STEPS) -> np.ndarray:
    r"""Fluid temperature along a flowing line whose U′ depends on the fluid temperature.

    Integrates ṁ c_p(θ) dθ/dx = −U′(θ) (θ − θ_a) from x = 0 to L in ``steps`` equal steps of
    classical fourth-order Runge–Kutta, in the variable y = ln|θ − θ_a|:

    .. math:: \frac{dy}{dx} = -\frac{U'(\theta_a \pm e^{y})}{\dot m c_p(\theta_a \pm e^{y})}

    With a constant U′ the right side is constant and the march is exact; with U′(θ) it
    is fourth order in the step and stays stable and monotone however long the line
    (θ never crosses θ_a).

    Parameters
    ----------
    t_in, t_air : array_like
        Inlet fluid and ambient air temperatures [K], one per line.
    u_of_t : callable
        ``u_of_t(T) -> U′``: T an array of fluid temperatures [K] of the lines' shape,
        U′ [W/(m·K)] of the same shape (or a scalar). Called 4 × ``steps`` times.
    length : array_like
        Line length [m].
    m_dot : array_like
        Mass flow [kg/s], positive.
    cp : array_like or callable
        Fluid specific heat [J/(kg·K)]: constant along the line, or ``cp(T) -> c_p`` of
        the lines' shape (e.g. :class:`SpecificHeat`), re-evaluated with U′.
    steps : int
        Runge–Kutta steps (default :data:`MARCH_STEPS` = 20). The error falls as
        steps⁻⁴; with 20 steps the tests find the outlet within 1e-6 × (θ_in − θ_a) of
        the exact one for U′ varying by a factor of 3 along lines of NTU = U′L/(ṁc_p)
        up to about 8.

    Returns
    -------
    ndarray
        θ [K] at x_k = k L / steps, shape (steps + 1,) + the lines' shape; NaN on lines
        whose ṁ or c_p is not positive.

    Notes
    -----
    Single-phase fluid, no heat from friction, fluid well mixed across the pipe: check
    that the profile stays above the fluid's freezing point and below its boiling point
    (:func:`distance_to`).

    References
    ----------
    ISO 12241 clause 5.1 (REFERENCES.md, from memory) for the balance.
    """
    cp_of_t = cp if callable(cp) else None
    arrays = np.broadcast_arrays(*(np.asarray(a, dtype=float)
                                   for a in (t_in, t_air, length, m_dot, 1.0 if cp_of_t else cp)))
    shape = arrays[0].shape
    t_in, t_air, L, m, c = (a.ravel() for a in arrays)
    if cp_of_t is not None:
        c = np.broadcast_to(np.asarray(cp_of_t(t_in.reshape(shape)), dtype=float), shape).ravel()
    ok = (m > 0) & (c > 0)
    h = np.where(ok, L / steps / np.where(ok, m, 1.0), 0.0)  # dx/ṁ [m·s/kg]
    sign = np.sign(t_in - t_air)
    with np.errstate(divide="ignore"):
        y = np.log(np.abs(t_in - t_air))

    def temperature(yy):
        return np.where(sign == 0, t_air, t_air + sign * np.exp(yy))

    def f(yy):
        t = temperature(yy).reshape(shape)
        u = np.broadcast_to(np.asarray(u_of_t(t), dtype=float), shape).ravel()
        cc = c if cp_of_t is None else np.broadcast_to(np.asarray(cp_of_t(t), dtype=float), shape).ravel()
        return -u / np.where(ok, cc, 1.0)

    rows = [t_in]
    for _ in range(steps):
        k1 = f(y)
        k2 = f(y + 0.5 * h * k1)
        k3 = f(y + 0.5 * h * k2)
        k4 = f(y + h * k3)
        y = y + h / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4)
        rows.append(temperature(y))
    profile = np.where(ok, np.stack(rows), np.nan)
    return profile.reshape((steps + 1,) + shape)


def outlet_temperature_marching(t_in, t_air, u_of_t: Coefficient, length, m_dot, cp,
                                steps: int = MARCH_STEPS) -> np.ndarray:
    """Outlet temperature [K] of a flowing line with U′ re-evaluated along it.

    The last row of :func:`temperature_profile` (same parameters, same method:
    ``steps`` Runge–Kutta steps in ln|θ − θ_a|, default 20). Equals
    :func:`outlet_temperature_closed` when U′ is constant.
    """
    return temperature_profile(t_in, t_air, u_of_t, length, m_dot, cp, steps)[-1]


class SpecificHeat:
    r"""c_p(T) of each line's fluid, tabulated once on a uniform grid per line and
    interpolated linearly, with its exact integral (the enthalpy change at constant pressure).

    Parameters
    ----------
    lo, hi : array_like
        Temperature range [K] of each line's table (outside it c_p is held at the end value).
    values : array_like
        c_p [J/(kg·K)] at the ``K`` uniform knots, shape (K, lines).

    Notes
    -----
    :meth:`enthalpy` integrates the piecewise-linear c_p exactly, so the heat a marched
    line gives up, ṁ (h(θ_in) − h(θ_out)), is consistent with the march to rounding.
    """

    def __init__(self, lo, hi, values):
        self.lo = np.asarray(lo, dtype=float)
        self.hi = np.asarray(hi, dtype=float)
        self.values = np.asarray(values, dtype=float)
        k = self.values.shape[0]
        self.step = (self.hi - self.lo) / (k - 1)
        trapezoids = 0.5 * (self.values[1:] + self.values[:-1]) * self.step
        self.cumulative = np.vstack([np.zeros_like(self.lo), np.cumsum(trapezoids, axis=0)])

    @classmethod
    def constant(cls, cp):
        cp = np.asarray(cp, dtype=float)
        return cls(np.zeros_like(cp), np.ones_like(cp), np.vstack([cp, cp]))

    def take(self, rows) -> SpecificHeat:
        """The tables of lines ``rows`` (e.g. one per named condition of a line)."""
        return SpecificHeat(self.lo[rows], self.hi[rows], self.values[:, rows])

    def _where(self, t):
        k = self.values.shape[0]
        x = np.clip((np.asarray(t, dtype=float) - self.lo) / self.step, 0.0, k - 1)
        i = np.minimum(x.astype(np.intp), k - 2)
        cols = np.arange(self.lo.size).reshape(self.lo.shape)
        return i, x - i, cols

    def __call__(self, t) -> np.ndarray:
        i, w, cols = self._where(t)
        lo, hi = self.values[i, cols], self.values[i + 1, cols]
        return lo + w * (hi - lo)

    def enthalpy(self, t) -> np.ndarray:
        """∫ c_p dT from the table's low end to ``t`` [J/kg] (c_p held constant past the ends)."""
        t = np.asarray(t, dtype=float)
        i, w, cols = self._where(t)
        lo, hi = self.values[i, cols], self.values[i + 1, cols]
        d = w * self.step
        inside = self.cumulative[i, cols] + lo * d + 0.5 * (hi - lo) / self.step * d * d
        below = np.minimum(t - self.lo, 0.0) * self.values[0]
        above = np.maximum(t - self.hi, 0.0) * self.values[-1]
        return inside + below + above


def distance_to(t_in, t_target, t_air, u_of_t: Coefficient, m_dot, cp,
                nodes: int = NODES) -> np.ndarray:
    r"""Distance from the inlet at which a flowing fluid reaches ``t_target``.

    From the same balance as :func:`temperature_profile`, the distance is

    .. math:: x = \int_{\theta_t}^{\theta_{in}} \frac{\dot m\,c_p(\theta)\,d\theta}
                   {U'(\theta)(\theta-\theta_a)},

    taken by :func:`cooling_time` (Gauss–Legendre in ln|θ − θ_a|) with ṁ in place of the
    capacity and U′/c_p in place of U′.

    Parameters
    ----------
    t_in, t_target, t_air : array_like
        Inlet, target and air temperatures [K].
    u_of_t : callable
        ``u_of_t(T) -> U′`` [W/(m·K)] (or UA [W/K]: the result is then a fraction of the line).
    m_dot : array_like
        Mass flow [kg/s].
    cp : array_like or callable
        c_p [J/(kg·K)], or ``cp(T)``.
    nodes : int
        Gauss–Legendre nodes.

    Returns
    -------
    ndarray
        x [m] (or the fraction of the line); 0 where the inlet is already at or past the
        target, ``np.inf`` where the target lies at or beyond the air temperature.
    """
    cp_of_t = cp if callable(cp) else (lambda _t: np.asarray(cp, dtype=float))

    def u_over_cp(t):
        return np.asarray(u_of_t(t), dtype=float) / cp_of_t(t)

    return cooling_time(t_in, t_target, t_air, m_dot, u_over_cp, nodes)


# --------------------------------------------------------------------------- stagnant contents


def cooling_time(t_initial, t_final, t_air, capacity, u_of_t: Coefficient,
                 nodes: int = NODES) -> np.ndarray:
    r"""Time for lumped contents to go from θ_i to θ_f with a loss coefficient U′(θ).

    The contents (heat capacity C = Σ m c_p) follow C dθ/dt = −U′(θ)(θ − θ_a), so

    .. math:: t = \int_{\theta_f}^{\theta_i} \frac{C\,d\theta}{U'(\theta)(\theta-\theta_a)}
               = \int_{s_f}^{s_i} \frac{C}{U'(\theta_a \pm e^{s})}\,ds,
               \quad s = \ln|\theta-\theta_a|,

    taken by a fixed ``nodes``-point Gauss–Legendre rule in s on all lines at once.
    For a constant U′ this is exactly (C/U′) ln((θ_i − θ_a)/(θ_f − θ_a)), the ISO 12241
    clause 5.2 form (REFERENCES.md, from memory); in s, power laws of θ − θ_a (free
    convection, radiation) become smooth exponentials, which the rule integrates to
    near machine precision.

    Parameters
    ----------
    t_initial, t_final, t_air : array_like
        Initial and final contents temperatures and the air temperature [K].
    capacity : array_like
        Heat capacity C [J/K] (or [J/(m·K)] per metre, with U′ per metre).
    u_of_t : callable
        ``u_of_t(T) -> U′`` [W/K] (or [W/(m·K)]), arrays of the lines' shape; called
        ``nodes`` times.
    nodes : int
        Gauss–Legendre nodes (default :data:`NODES` = 24).

    Returns
    -------
    ndarray
        t [s]. 0 where θ_i is already at or past θ_f (seen from θ_a); ``np.inf`` where θ_f
        is never reached: on the far side of θ_a or equal to it (the approach to θ_a is
        exponential), or where U′ ≤ 0; NaN for non-finite inputs or C ≤ 0.

    Notes
    -----
    Lumped: the contents are well mixed (one temperature) and the wall and contents are
    at the same temperature. A cold line warming towards θ_a works the same way
    (θ_i < θ_f < θ_a).
    """
    arrays = np.broadcast_arrays(*(np.asarray(a, dtype=float)
                                   for a in (t_initial, t_final, t_air, capacity)))
    shape = arrays[0].shape
    ti, tf, ta, cap = (a.ravel() for a in arrays)
    a, b = ti - ta, tf - ta
    sign = np.sign(a)
    bad = ~(np.isfinite(a) & np.isfinite(b) & np.isfinite(cap)) | ~(cap > 0)
    done = (a == 0) & (b == 0) | (sign != 0) & (np.sign(b) == sign) & (np.abs(b) >= np.abs(a))
    run = ~bad & ~done & (sign != 0) & (np.sign(b) == sign)
    s_i = np.log(np.where(run, np.abs(a), 1.0))
    s_f = np.log(np.where(run, np.abs(b), 1.0))
    half, mid = 0.5 * (s_i - s_f), 0.5 * (s_i + s_f)
    xi, w = np.polynomial.legendre.leggauss(nodes)
    total = np.zeros_like(ti)
    for x, wj in zip(xi, w, strict=True):
        t = np.where(run, ta + sign * np.exp(mid + half * x), ti)  # idle lines: their own θ_i
        u = np.broadcast_to(np.asarray(u_of_t(t.reshape(shape)), dtype=float), shape).ravel()
        with np.errstate(divide="ignore"):
            total = total + wj * np.where(u > 0, 1.0 / u, np.where(np.isnan(u), np.nan, np.inf))
    with np.errstate(invalid="ignore"):
        time = cap * half * total
    return np.select([bad, done, run], [np.nan, 0.0, time], np.inf).reshape(shape)


class FreezeTime(NamedTuple):
    cooling: np.ndarray  # [s] from the operating temperature to 0 °C
    freezing: np.ndarray  # [s] to freeze the fraction f at 0 °C
    total: np.ndarray  # [s] cooling + freezing


def freeze_time(t_operating, t_air, u_of_t: Coefficient, water_volume, wall_mass=0.0,
                wall_cp=0.0, fraction=FREEZE_FRACTION, pressure=P_ATM,
                nodes: int = NODES) -> FreezeTime:
    r"""Time for stagnant water in a line to cool to 0 °C and then freeze a fraction f.

    1. Cool-down, :func:`cooling_time` from θ_i to 0 °C with the lumped capacity of water
       and pipe wall, C = ρ V c_p + m_wall c_wall, U′(θ) re-evaluated as it cools.
    2. Freezing at 0 °C: t_f = f ρ V h_if / (U′(0 °C) (0 °C − θ_a)), h_if =
       :data:`H_FUSION_ICE` = 333.55 kJ/kg (handbook value, from memory).

    ISO 12241 clause 6.1 (REFERENCES.md, from memory); f = 0.25 by default is common
    practice, not a value of the standard.

    Parameters
    ----------
    t_operating : array_like
        Water temperature when the flow stops [K].
    t_air : array_like
        Air temperature [K].
    u_of_t : callable
        ``u_of_t(T) -> U′`` [W/(m·K)] (or [W/K] for a whole line), arrays of the lines'
        shape; called ``nodes`` + 1 times.
    water_volume : array_like
        Water volume [m³/m per metre, i.e. the bore area π d_i²/4; or m³ for a line].
    wall_mass, wall_cp : array_like
        Pipe wall mass [kg/m or kg] and specific heat [J/(kg·K)]; 0 leaves the wall out.
    fraction : array_like
        Fraction of the water allowed to freeze, 0 < f ≤ 1.
    pressure : array_like
        Water pressure [Pa] for its properties.
    nodes : int
        Gauss–Legendre nodes of the cool-down integral.

    Returns
    -------
    FreezeTime
        ``cooling``, ``freezing``, ``total`` [s]. ``np.inf`` where the air is at or above
        0 °C (the water never freezes). Water at or below 0 °C at the start has
        ``cooling`` = 0.

    Notes
    -----
    ρ and c_p of the water are CoolProp's at the mean cool-down temperature (θ_i + 0 °C)/2
    (not below 273.16 K, where CoolProp's water starts), the same ρ giving the mass that
    freezes. Supercooling is ignored, water and ice stay at 0 °C while it freezes, and
    U′ at 0 °C holds throughout (the ice layer's added resistance is neglected).
    """
    t_op, ta, vol, mw, cw, f, pp = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (
        t_operating, t_air, water_volume, wall_mass, wall_cp, fraction, pressure)))
    props = fluid_properties("Water", np.maximum(0.5 * (t_op + T_ICE), T_TRIPLE_WATER), pp)
    mass = props.density * vol
    cap = mass * props.cp + mw * cw
    warm = t_op > T_ICE
    cool = cooling_time(np.where(warm, t_op, T_ICE + 1.0), T_ICE, ta, cap, u_of_t, nodes)
    cool = np.where(np.isnan(t_op), np.nan, np.where(warm, cool, 0.0))
    u0 = np.broadcast_to(np.asarray(u_of_t(np.full_like(t_op, T_ICE)), dtype=float), t_op.shape)
    loss = u0 * (T_ICE - ta)
    with np.errstate(divide="ignore", invalid="ignore"):
        freeze = np.where(loss > 0, f * mass * H_FUSION_ICE / loss, np.inf)
    freeze = np.where(np.isnan(loss) | ~(f > 0) | ~np.isfinite(mass), np.nan, freeze)
    return FreezeTime(cooling=cool, freezing=freeze, total=cool + freeze)


class VesselCooldown(NamedTuple):
    time: np.ndarray  # [s] to reach the limit temperature
    capacity: np.ndarray  # [J/K] contents + shell
    cp: np.ndarray  # contents' specific heat [J/(kg·K)]
    density: np.ndarray  # contents' density [kg/m³]


def vessel_cooldown(t_operating, t_limit, t_air, ua_of_t: Coefficient | Sequence[Coefficient],
                    volume, fluid="Water", pressure=P_ATM, shell_mass=0.0, shell_cp=0.0,
                    nodes: int = NODES, cp=math.nan, density=math.nan) -> VesselCooldown:
    """Time for a vessel's stagnant contents to cool from operating to a limit temperature.

    The lumped balance of :func:`cooling_time`, with C = ρ V c_p + m_shell c_shell and
    UA(θ) [W/K] the sum of the given surfaces' coefficients (shell, heads, nozzles...).
    ISO 12241 clause 5.2 (REFERENCES.md, from memory).

    Parameters
    ----------
    t_operating : array_like
        Contents temperature at the start [K].
    t_limit : array_like
        The lowest acceptable contents temperature [K] (for cold contents warming up,
        the highest).
    t_air : array_like
        Air temperature [K].
    ua_of_t : callable or sequence of callables
        ``ua(T) -> UA`` [W/K] for the shell, and optionally more for other surfaces, each
        taking an array of contents temperatures of the vessels' shape.
    volume : array_like
        Contents volume [m³].
    fluid : str or array of str
        CoolProp fluid name of the contents.
    pressure : array_like
        Contents pressure [Pa].
    shell_mass, shell_cp : array_like
        Shell mass [kg] and specific heat [J/(kg·K)]; 0 leaves the shell out.
    nodes : int
        Gauss–Legendre nodes.
    cp, density : array_like
        Specific heat [J/(kg·K)] and density [kg/m³] of contents CoolProp does not know
        (a user's fluid, constant), used where ``fluid`` is ``""``.

    Returns
    -------
    VesselCooldown
        ``time`` [s] (0 if already at or past the limit, ``np.inf`` if the limit lies at or
        beyond the air temperature), ``capacity`` [J/K], ``cp`` [J/(kg·K)] and ``density``
        [kg/m³] of the contents.

    Notes
    -----
    c_p and ρ are CoolProp's at the mean temperature (θ_i + θ_limit)/2 and the given
    pressure, and the mass is ρ V at that mean; the contents stay single-phase (a liquid
    that boils or freezes in the range gives NaN or a wrong capacity). For water between
    90 °C and 10 °C, ρ at the mean differs from ρ at 90 °C by about 2 %.
    """
    parts = [ua_of_t] if callable(ua_of_t) else list(ua_of_t)

    def ua(t):
        return sum(np.asarray(p(t), dtype=float) for p in parts)

    t_op, t_lim, ta, vol, ms, cs, pp, c_given, rho_given = np.broadcast_arrays(
        *(np.asarray(a, dtype=float) for a in (t_operating, t_limit, t_air, volume, shell_mass, shell_cp,
                                               pressure, cp, density)))
    names = np.broadcast_to(np.asarray(fluid, dtype=str), t_op.shape)
    c_p, rho = c_given.copy(), rho_given.copy()
    known = names != ""
    if known.any():  # CoolProp once for the known fluids (the others keep the given values)
        props = fluid_properties(names[known], 0.5 * (t_op[known] + t_lim[known]), pp[known])
        c_p[known], rho[known] = props.cp, props.density
    cap = rho * c_p * vol + ms * cs
    time = cooling_time(t_op, t_lim, ta, cap, ua, nodes)
    return VesselCooldown(time=time, capacity=np.asarray(cap), cp=c_p, density=rho)


# --------------------------------------------------------------------------- from the engine


def loss_coefficient(system: System, table: MaterialTable, scale=1.0,
                     nudge: float = 1e-3) -> Coefficient:
    """``u_of_t`` from the engine: U′(T) = heat rate with the inner face at T / (T − T_air).

    Each call solves the surface balance of every line of ``system`` with its operating
    temperature replaced by T (:func:`lagsheet.physics.balance.solve`) and returns

        U′ = scale × heat_rate(T) / (T − T_air),

    heat_rate per metre for cylinders, per m² for flats, whole for spheres
    (:func:`lagsheet.physics.candidates.heat_rate`).

    Parameters
    ----------
    system : System
        The lines (their own ``t_operating`` is ignored).
    table : MaterialTable
        Conductivities of the lines' materials.
    scale : array_like
        Multiplier per line: 1 for U′ per metre [W/(m·K)]; the length [m] (pipes,
        vessel shells) or area [m²] (flats) for UA [W/K].
    nudge : float
        Where |T − T_air| < ``nudge`` [K], U′ is taken at T_air ± ``nudge`` (the ratio is
        0/0 at T_air).

    Returns
    -------
    callable
        ``u_of_t(T)`` for T of shape (lines,) [K].

    Notes
    -----
    The fluid is taken at the inner face (no inner film or pipe-wall resistance), as in
    the engine. U′ is referred to the air temperature: with surroundings far from the air
    the heat loss does not vanish at T_air, and the lumped functions (which assume the
    contents approach T_air) are then approximate.
    """
    t_air = np.asarray(system.t_air, dtype=float)
    factor = np.broadcast_to(np.asarray(scale, dtype=float), t_air.shape)

    def u_of_t(t):
        t = np.asarray(t, dtype=float)
        d = t - t_air
        t_eval = np.where(np.abs(d) < nudge, t_air + np.where(d < 0, -nudge, nudge), t)
        sol = solve(replace(system, t_operating=t_eval), table)
        return factor * heat_rate(system.geometry, sol.q, sol.r_outer) / (t_eval - t_air)

    return u_of_t

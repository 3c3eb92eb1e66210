"""Steady riding: the power for a speed, and the speed for a power.

Two layers. Everything above this module speaks of a vehicle by its
:class:`~cardgen.physics.forces.Resistance` and of the wind and air by an
:class:`~cardgen.physics.forces.Air`: :func:`steady_power`, :func:`steady_speed` and
:func:`steady_terms`. Below them is the solver core, :func:`power_for_speed` and
:func:`speed_for_power` (with :func:`~cardgen.physics.forces.steady_breakdown`): SI
keywords, each of them a float or an array, so that a check can vary mass, Crr or
CdA element by element. Only this module, the tests and the solver benchmark call
the core.

Vectorised over every argument (numpy broadcasting). Speed for power is solved by a
safeguarded Newton iteration on the whole array at once (Newton steps that leave the
current bracket fall back to bisection), so each element converges without a Python
loop over elements.

References
----------
Martin, J. C. et al. (1998). Validation of a mathematical model for road cycling
power. J. Appl. Biomech. 14(3):276–291. doi:10.1123/jab.14.3.276
Press, W. H., Teukolsky, S. A., Vetterling, W. T. & Flannery, B. P. (2007).
*Numerical Recipes*, 3rd ed., §9.4 (Newton-Raphson with bracketing, "rtsafe").
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np

from cardgen.physics.atmosphere import SEA_LEVEL_AIR_DENSITY
from cardgen.physics.forces import (
    STILL_AIR,
    Air,
    Breakdown,
    ForceLaw,
    Resistance,
    steady_breakdown,
    wheel_power,
)
from cardgen.units import Floats

#: First guess for the upper end of the speed bracket [m/s]; doubled until it holds.
_FIRST_UPPER = 1.0
_MAX_DOUBLINGS = 20
_TOL = 1e-11
_MAX_ITER = 100


def power_for_speed(
    speed: Floats,
    *,
    mass: Floats,
    crr: Floats,
    cda: Floats,
    efficiency: Floats = 1.0,
    grade: Floats = 0.0,
    headwind: Floats = 0.0,
    air_density: Floats = SEA_LEVEL_AIR_DENSITY,
    bearings: bool = True,
) -> Floats:
    """Power at the pedals to hold a steady ground speed.

    Parameters
    ----------
    speed : float or array [m/s], ≥ 0
    mass : float or array [kg] total moving mass
    crr : float or array [-]
    cda : float or array [m²]
    efficiency : float or array [-] drivetrain efficiency
    grade : float or array [-] rise/run
    headwind : float or array [m/s]; negative is a tailwind
    air_density : float or array [kg/m³]
    bearings : bool
        Include wheel-bearing friction (Dahn et al. 1991).

    Returns
    -------
    float or array [W]; negative where the rider would have to brake to hold the
    speed. NaN for a negative speed or impossible parameters.

    Notes
    -----
    P = (P_AT + P_RR + P_WB + P_PE) / E_C (positive sums only), Martin et al. (1998).

    References
    ----------
    Martin et al. (1998), J. Appl. Biomech. 14:276–291.
    """
    total = steady_breakdown(
        speed,
        mass=mass,
        crr=crr,
        cda=cda,
        efficiency=efficiency,
        grade=grade,
        headwind=headwind,
        air_density=air_density,
        bearings=bearings,
    ).total
    ok = (np.asarray(speed) >= 0) & _valid(mass, crr, cda, efficiency, air_density, grade)
    return np.where(ok, total, np.nan)[()]


def _valid(
    mass: Floats, crr: Floats, cda: Floats, efficiency: Floats, air_density: Floats, grade: Floats
) -> np.ndarray:
    with np.errstate(invalid="ignore"):
        return (
            (np.asarray(mass) > 0)
            & (np.asarray(crr) >= 0)
            & (np.asarray(cda) > 0)
            & (np.asarray(efficiency) > 0)
            & (np.asarray(efficiency) <= 1)
            & (np.asarray(air_density) > 0)
            & np.isfinite(grade)
        )


def _solve_increasing(
    fun: Callable[..., Any], lo: np.ndarray, hi: np.ndarray, x: np.ndarray, tol: Floats = _TOL
) -> np.ndarray:
    """Root of ``fun`` in [lo, hi] where fun(lo) ≤ 0 ≤ fun(hi), vectorised.

    ``fun(x, sel)`` returns (f, df/dx) for the elements ``sel`` of the problem. Newton
    steps are kept inside the shrinking bracket; a step that would leave it is
    replaced by bisection (rtsafe). Converged elements drop out of the iteration.
    """
    x, lo, hi = x.copy(), lo.copy(), hi.copy()
    active = np.arange(x.size)
    for _ in range(_MAX_ITER):
        xa, la, ha = x[active], lo[active], hi[active]
        f, df = fun(xa, active)
        below = f < 0.0
        la = np.where(below, xa, la)
        ha = np.where(below, ha, xa)
        with np.errstate(divide="ignore", invalid="ignore"):
            step = xa - f / df
        inside = (step >= la) & (step <= ha)
        new = np.where(inside, step, 0.5 * (la + ha))
        scale = tol * (1.0 + np.abs(xa))
        done = (inside & (np.abs(step - xa) <= scale)) | (f == 0.0) | (ha - la <= scale)
        x[active], lo[active], hi[active] = new, la, ha
        active = active[~done]
        if not active.size:
            break
    return x


def _excess(
    force: ForceLaw, pw: np.ndarray, elements: np.ndarray
) -> Callable[[Floats, Any], tuple[np.ndarray, np.ndarray]]:
    """v·F(v) − P_wheel and its derivative, for the given elements of the problem."""

    def excess(v: Floats, sel: Any) -> tuple[np.ndarray, np.ndarray]:
        idx = elements[sel]
        f, df = force(v, idx)
        return v * f - pw[idx], f + v * df

    return excess


def _upper_bracket(
    force: ForceLaw, pw: np.ndarray, ok: np.ndarray, first: np.ndarray | None = None
) -> np.ndarray:
    """Upper end of the bracket, F(hi) > 0 and hi·F(hi) > P_wheel, doubled from a low
    first guess (or from ``first`` [m/s] per element) so that Newton starts within a
    factor two of the root. Elements that find none are marked not ``ok``."""
    hi = np.full_like(pw, _FIRST_UPPER) if first is None else first.copy()
    short = np.flatnonzero(ok)
    for _ in range(_MAX_DOUBLINGS):
        f_hi, _ = force(hi[short], short)
        short = short[(f_hi <= 0) | (hi[short] * f_hi <= pw[short])]
        if not short.size:
            break
        hi[short] *= 2.0
    ok[short] = False
    return hi


def _pulled_speed(
    force: ForceLaw, pw: np.ndarray, pulled: np.ndarray, hi: np.ndarray, rtol: Floats
) -> np.ndarray:
    """Speeds of the elements coasting or braking with a downhill pull: the coasting
    speed F(v₀) = 0, and where braking, the stable root of v·F(v) = P_wheel between
    the minimum of v·F(v) and v₀ (0 where braking is stronger than gravity can feed)."""

    def net_force(v: Floats, sel: Any) -> tuple[np.ndarray, np.ndarray]:
        return force(v, pulled[sel])

    v0 = _solve_increasing(net_force, np.zeros(pulled.size), hi[pulled], hi[pulled], rtol)
    speed = np.asarray(v0, dtype=float).copy()
    brake_local = np.flatnonzero(pw[pulled] < 0)
    if brake_local.size:
        brake = pulled[brake_local]
        top = v0[brake_local]
        k = force.k

        def slope(v: Floats, sel: Any) -> tuple[np.ndarray, np.ndarray]:  # d(v·F)/dv and its derivative
            idx = brake[sel]
            f, df = force(v, idx)
            return f + v * df, 2.0 * df + v * 2.0 * k[idx] * np.sign(v + force.wind[idx])

        v_min = _solve_increasing(slope, np.zeros(brake.size), top, top, rtol)
        f_min, _ = force(v_min, brake)
        reachable = v_min * f_min <= pw[brake]
        v_brake = _solve_increasing(_excess(force, pw, brake), v_min, top, top, rtol)
        speed[brake_local] = np.where(reachable, v_brake, 0.0)
    return speed


def speed_for_power(
    power: Floats,
    *,
    mass: Floats,
    crr: Floats,
    cda: Floats,
    efficiency: Floats = 1.0,
    grade: Floats = 0.0,
    headwind: Floats = 0.0,
    air_density: Floats = SEA_LEVEL_AIR_DENSITY,
    bearings: bool = True,
    rtol: Floats = _TOL,
    guess: Floats | None = None,
) -> Floats:
    """Steady ground speed reached at a constant power.

    Parameters
    ----------
    power : float or array [W] at the pedals; zero is coasting, negative is braking
    mass, crr, cda, efficiency, grade, headwind, air_density, bearings
        As in :func:`power_for_speed`.
    rtol : float
        Relative tolerance on the speed (default 1e-11); a first guess for an
        iteration elsewhere can ask for less.
    guess : float or array [m/s], optional
        Where the iteration starts (a speed near the answer, such as the speed at a
        nearby power): the same answer, within ``rtol``, in fewer steps.

    Returns
    -------
    float or array [m/s]. On a descent the stable (terminal) speed, where extra
    speed brings extra drag. 0 where the vehicle stops (no power and no downhill
    pull, or braking stronger than gravity can feed). NaN for impossible parameters.

    Notes
    -----
    With F(v) = ½ρCdA(v+w)|v+w| + m·g·(Crr·cos θ + sin θ) + a + b·v the force at the
    wheel, the answer is the largest v ≥ 0 with v·F(v) = P_wheel. F rises with v, so
    for P_wheel > 0 that root is unique. For P_wheel ≤ 0 on a descent the largest root
    lies between the minimum of v·F(v) and the coasting speed F(v₀) = 0, where
    v·F(v) rises: that is the stable equilibrium.

    References
    ----------
    Martin et al. (1998), J. Appl. Biomech. 14:276–291; Press et al. (2007) §9.4.
    """
    args = np.broadcast_arrays(
        np.asarray(power, dtype=float),
        mass,
        crr,
        cda,
        efficiency,
        grade,
        headwind,
        air_density,
    )
    shape = args[0].shape
    p, m, c_rr, c_da, eff, gr, w, rho = (np.asarray(a, dtype=float).ravel() for a in args)
    ok = _valid(m, c_rr, c_da, eff, rho, gr) & np.isfinite(p) & np.isfinite(w)
    pw = np.asarray(wheel_power(np.where(ok, p, 0.0), np.where(ok, eff, 1.0)))
    # invalid elements get a harmless law; they are set to NaN at the end
    force = ForceLaw.build(
        mass=np.where(ok, m, 1.0),
        crr=np.where(ok, c_rr, 0.0),
        cda=np.where(ok, c_da, 1.0),
        grade=np.where(ok, gr, 1.0),
        headwind=np.where(ok, w, 0.0),
        air_density=np.where(ok, rho, 2.0),
        bearings=bearings,
    )
    speed = np.zeros_like(p)
    first = None
    if guess is not None:
        g = np.broadcast_to(np.asarray(guess, dtype=float), shape).ravel()
        first = np.where(np.isfinite(g) & (g > _FIRST_UPPER), g, _FIRST_UPPER)
    hi = _upper_bracket(force, pw, ok, first)

    # Pedalling: the single root of v·F(v) − P_wheel on [0, hi].
    push = np.flatnonzero(ok & (pw > 0))
    if push.size:
        # The root lies in (hi/2, hi] once hi has been doubled: start in between (or
        # at the guess, when it already bounds the root)
        start = np.where(hi[push] > _FIRST_UPPER, 0.75 * hi[push], hi[push])
        if first is not None:
            start = np.where(hi[push] == first[push], hi[push], start)
        speed[push] = _solve_increasing(_excess(force, pw, push), np.zeros(push.size), hi[push], start, rtol)

    # Coasting or braking with a downhill pull.
    f0, _ = force(np.zeros_like(p), slice(None))
    pulled = np.flatnonzero(ok & (pw <= 0) & (f0 < 0))
    if pulled.size:
        speed[pulled] = _pulled_speed(force, pw, pulled, hi, rtol)

    speed[~ok] = np.nan
    return speed.reshape(shape)[()]


def _keywords(resistance: Resistance, air: Air, grade: Floats, at_wheel: bool) -> dict[str, Any]:
    """The solver core's keywords for a vehicle on ``grade`` in ``air``; with
    ``at_wheel`` the drivetrain is left out (efficiency 1: power at the wheel)."""
    return dict(
        mass=resistance.mass,
        crr=resistance.crr,
        cda=resistance.cda,
        efficiency=1.0 if at_wheel else resistance.efficiency,
        bearings=resistance.bearings,
        grade=grade,
        headwind=air.headwind,
        air_density=air.air_density,
    )


def steady_power(
    speed: Floats,
    *,
    resistance: Resistance,
    grade: Floats = 0.0,
    air: Air = STILL_AIR,
    at_wheel: bool = False,
) -> Floats:
    """Power [W] to hold a steady ground speed [m/s]: at the pedals, or at the wheel
    with ``at_wheel``. :func:`power_for_speed` for a vehicle on ``grade`` [-] in
    ``air``.

    References
    ----------
    Martin et al. (1998), J. Appl. Biomech. 14:276–291.
    """
    return power_for_speed(speed, **_keywords(resistance, air, grade, at_wheel))


def steady_speed(
    power: Floats,
    *,
    resistance: Resistance,
    grade: Floats = 0.0,
    air: Air = STILL_AIR,
    at_wheel: bool = False,
    rtol: Floats = _TOL,
    guess: Floats | None = None,
) -> Floats:
    """Steady ground speed [m/s] at a constant power [W]: at the pedals, or at the
    wheel with ``at_wheel``. :func:`speed_for_power` for a vehicle on ``grade`` [-]
    in ``air``; ``rtol`` and ``guess`` as there.

    References
    ----------
    Martin et al. (1998), J. Appl. Biomech. 14:276–291; Press et al. (2007) §9.4.
    """
    return speed_for_power(power, **_keywords(resistance, air, grade, at_wheel), rtol=rtol, guess=guess)


def steady_terms(
    speed: Floats, *, resistance: Resistance, grade: Floats = 0.0, air: Air = STILL_AIR
) -> Breakdown:
    """Every term of the steady power balance at a ground speed [m/s]:
    :func:`~cardgen.physics.forces.steady_breakdown` for a vehicle on ``grade`` [-]
    in ``air``.

    References
    ----------
    Martin et al. (1998), J. Appl. Biomech. 14:276–291.
    """
    return steady_breakdown(speed, **_keywords(resistance, air, grade, at_wheel=False))

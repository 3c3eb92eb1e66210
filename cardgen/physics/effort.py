"""How hard a rider rides, and what it costs them above critical power.

The effort model: the flat power everywhere, the climbing power on climbs, and no
pedalling where gravity alone keeps the rider at least as fast as their flat speed on
level ground. The W′ balance follows Skiba et al. (2012); the safe climbing power is
the highest steady power whose work above CP fits the W′ left.

References
----------
Monod, H. & Scherrer, J. (1965). The work capacity of a synergic muscular group.
*Ergonomics* 8(3):329–338. doi:10.1080/00140136508930810 (critical power).
Skiba, P. F., Chidnok, W., Vanhatalo, A. & Jones, A. M. (2012). Modeling the
expenditure and reconstitution of work capacity above critical power. *Med. Sci.
Sports Exerc.* 44(8):1526–1532. doi:10.1249/MSS.0b013e3182517a80
"""

from __future__ import annotations

from typing import Any

import numpy as np

from cardgen.physics.forces import Resistance
from cardgen.physics.ride import UNBOUNDED, clamp_affine_scan
from cardgen.physics.steady import power_for_speed, speed_for_power
from cardgen.units import Floats

#: Air density [kg/m³] at which the flat speed that sets coasting is worked out.
FLAT_AIR_DENSITY = 1.2


def effort_power(
    *,
    flat_power: float,
    climb_power: float,
    on_climb: Floats,
    grade: Floats,
    headwind: Floats,
    air_density: Floats,
    resistance: Resistance,
) -> Any:
    """Rider power [W] on every segment: the effort model of the module notes.

    Parameters
    ----------
    flat_power, climb_power : float [W]
    on_climb : bool array (n,) segments on a climb
    grade, headwind, air_density : arrays (n,) [-], [m/s], [kg/m³]
    resistance : Resistance

    Returns
    -------
    array (n,) [W]; 0 where the rider coasts.

    Notes
    -----
    Coasting is at least as fast as the flat speed exactly where, at that speed,
    gravity (and wind) already cover every loss: P(v_flat) ≤ 0 (Martin et al. 1998).
    """
    power = np.where(np.asarray(on_climb, dtype=bool), climb_power, flat_power).astype(float)
    steady = resistance.steady()
    flat_speed = speed_for_power(flat_power, **steady, grade=0.0, headwind=0.0, air_density=FLAT_AIR_DENSITY)
    coasts = (
        power_for_speed(
            flat_speed,
            **{**steady, "efficiency": 1.0},
            grade=grade,
            headwind=headwind,
            air_density=air_density,
        )
        <= 0
    )
    power[coasts] = 0.0
    return power


def safe_climb_power(
    *,
    cp: float,
    climb_power: float,
    w_prime_left: float,
    step: float,
    grade: Floats,
    headwind: Floats,
    air_density: Floats,
    resistance: Resistance,
) -> float | None:
    """Highest steady power [W] whose work above CP over a climb, (P − CP)·T(P), fits
    the W′ left at its foot; None when nothing is left.

    Parameters
    ----------
    cp, climb_power : float [W]; w_prime_left : float [J]; step : float [m] grid step
    grade, headwind, air_density : arrays over the climb's segments

    Notes
    -----
    Recovery during the climb is ignored, which errs on the safe side. Candidates run
    from CP to the climbing power in 40 steps.
    """
    if w_prime_left <= 0:
        return None
    candidates = np.linspace(cp, max(cp, climb_power), 41)
    grade = np.asarray(grade, dtype=float)
    length = step * np.sqrt(1.0 + grade**2)  # along the slope
    t = np.sum(
        length
        / speed_for_power(
            candidates[:, None],
            **resistance.steady(),
            grade=grade,
            headwind=headwind,
            air_density=air_density,
        ),
        axis=1,
    )
    fits = (candidates - cp) * t <= w_prime_left
    return float(candidates[fits].max())


def w_prime_balance_skiba(power: Floats, time: Floats, cp: float, w_prime: float) -> Any:
    """Balance of work capacity above critical power along a ride.

    Parameters
    ----------
    power : array [W] mean power of each interval
    time : array [s] duration of each interval
    cp : float [W] critical power
    w_prime : float [J] work capacity above CP

    Returns
    -------
    array [J] W′bal at the end of each interval (n,), may go below 0 (exhausted).

    Notes
    -----
    W′bal(t) = W′ − Σ_u W′exp(u)·e^{−(t−u)/τ}, with W′exp the work done above CP in
    each interval and τ = 546·e^{−0.01·D_CP} + 316 s, D_CP = CP minus the mean power
    of the intervals below CP (Skiba et al. 2012). Computed as the recurrence
    S₊ = S·e^{−Δt/τ} + W′exp with :func:`clamp_affine_scan`.

    References
    ----------
    Skiba et al. (2012), Med. Sci. Sports Exerc. 44:1526–1532.
    """
    p = np.asarray(power, dtype=float)
    # an interval never completed (the rider stalled: infinite time) adds nothing
    dt = np.nan_to_num(np.asarray(time, dtype=float), nan=0.0, posinf=0.0)
    below = p < cp
    if below.any() and dt[below].sum() > 0:
        d_cp = cp - np.sum(p[below] * dt[below]) / dt[below].sum()
    else:
        d_cp = 0.0
    tau = skiba_time_constant(d_cp)
    expended = np.maximum(p - cp, 0.0) * dt
    decay = np.exp(-dt / tau)
    spent = clamp_affine_scan(decay, expended, np.full(p.size, -UNBOUNDED), np.full(p.size, UNBOUNDED), 0.0)[
        1:
    ]
    return w_prime - spent


def skiba_time_constant(d_cp: Floats) -> Any:
    """Recovery time constant τ [s] of W′ for a recovery D_CP watts below CP.

    Notes
    -----
    τ = 546·e^{−0.01·D_CP} + 316

    References
    ----------
    Skiba et al. (2012), Med. Sci. Sports Exerc. 44:1526–1532.
    """
    return (546.0 * np.exp(-0.01 * np.asarray(d_cp, dtype=float)) + 316.0)[()]

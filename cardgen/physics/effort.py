"""How hard a rider rides, and what it costs them above critical power.

The effort model: the flat power everywhere, the climbing power on climbs, and no
pedalling where gravity alone keeps the rider at least as fast as their flat speed on
level ground. The W′ balance is the differential form of Skiba et al. (2015); the sustainable
climbing power (model) is the highest steady power whose work above CP fits the W′ left.

References
----------
Monod, H. & Scherrer, J. (1965). The work capacity of a synergic muscular group.
*Ergonomics* 8(3):329–338. doi:10.1080/00140136508930810 (critical power).
Skiba, P. F., Fulford, J., Clarke, D. C., Vanhatalo, A. & Jones, A. M. (2015).
Intramuscular determinants of the ability to recover work capacity above critical
power. *Eur. J. Appl. Physiol.* 115(4):703–713 (the differential W′ balance).
"""

from __future__ import annotations

import numpy as np

from cardgen.physics.forces import Air, Resistance
from cardgen.physics.ride import UNBOUNDED, clamp_affine_scan
from cardgen.physics.steady import steady_power, steady_speed
from cardgen.units import Floats


def effort_power(
    *,
    flat_power: float,
    climb_power: float,
    on_climb: Floats,
    grade: Floats,
    air: Air,
    resistance: Resistance,
) -> np.ndarray:
    """Rider power [W] on every segment: the effort model of the module notes.

    Parameters
    ----------
    flat_power, climb_power : float [W]
    on_climb : bool array (n,) segments on a climb
    grade : array (n,) [-]
    air : Air, headwind and air density per segment
    resistance : Resistance

    Returns
    -------
    array (n,) [W]; 0 where the rider coasts.

    Notes
    -----
    Coasting is at least as fast as the flat speed exactly where, at that speed,
    gravity (and wind) already cover every loss: P(v_flat) ≤ 0 (Martin et al. 1998).
    The flat speed is the one in still air at the ISA sea-level density.
    """
    power = np.where(np.asarray(on_climb, dtype=bool), climb_power, flat_power).astype(float)
    flat_speed = steady_speed(flat_power, resistance=resistance)
    coasts = steady_power(flat_speed, resistance=resistance, grade=grade, air=air, at_wheel=True) <= 0
    power[coasts] = 0.0
    return power


def sustainable_climb_power(
    *,
    cp: float,
    climb_power: float,
    w_prime_left: float,
    step: float,
    grade: Floats,
    air: Air,
    resistance: Resistance,
) -> float | None:
    """Highest steady power [W] whose work above CP over a climb, (P − CP)·T(P), fits
    the W′ left at its foot; None when nothing is left.

    Parameters
    ----------
    cp, climb_power : float [W]; w_prime_left : float [J]; step : float [m] grid step
    grade : array [-] over the climb's segments; air : Air over them

    Notes
    -----
    At a constant P ≥ CP nothing is recovered (Skiba et al. 2015), so W′ lasts the
    climb exactly when (P − CP)·T(P) ≤ W′left, with T(P) the climb's time at the steady
    speed for P: the critical-power model t = W′/(P − CP) (Monod & Scherrer 1965). The
    left side rises with P, so the answer is found by bisection to 0.01 W; it never
    exceeds ``climb_power``.
    """
    if w_prime_left <= 0:
        return None
    grade = np.asarray(grade, dtype=float)
    length = step * np.sqrt(1.0 + grade**2)  # along the slope

    def spent(power: float) -> float:
        speed = steady_speed(power, resistance=resistance, grade=grade, air=air)
        return float((power - cp) * np.sum(length / speed))

    low, high = cp, max(cp, climb_power)
    if spent(high) <= w_prime_left:
        return high
    while high - low > 0.01:
        middle = 0.5 * (low + high)
        low, high = (middle, high) if spent(middle) <= w_prime_left else (low, middle)
    return low


def w_prime_balance(power: Floats, time: Floats, cp: float, w_prime: float) -> np.ndarray:
    """Balance of work capacity above critical power along a ride, in the differential
    form: W′ is spent only above CP and recovered only below it.

    Parameters
    ----------
    power : array [W] mean power of each interval
    time : array [s] duration of each interval (an infinite one, where the rider
        stalled, counts as zero)
    cp : float [W] critical power
    w_prime : float [J] work capacity above CP

    Returns
    -------
    array [J] W′bal at the end of each interval (n,), below 0 where exhausted.

    Notes
    -----
    dW′bal/dt = −(P − CP) for P ≥ CP, and (W′ − W′bal)·(CP − P)/W′ for P < CP
    (Skiba et al. 2015). For a constant P over Δt both are affine in W′bal:
    W₊ = W − (P − CP)·Δt, and W₊ = W′ − (W′ − W)·e^{−(CP − P)·Δt/W′}; the chain is
    evaluated with :func:`clamp_affine_scan`. For a constant effort above CP the
    balance reaches zero after t = W′/(P − CP), the critical-power model of Monod &
    Scherrer (1965).

    References
    ----------
    Skiba, P. F., Fulford, J., Clarke, D. C., Vanhatalo, A. & Jones, A. M. (2015).
    Intramuscular determinants of the ability to recover work capacity above critical
    power. *Eur. J. Appl. Physiol.* 115(4):703–713 (the differential form; authors and
    pages from memory). Monod & Scherrer (1965), Ergonomics 8:329–338.
    """
    p = np.asarray(power, dtype=float)
    dt = np.nan_to_num(np.asarray(time, dtype=float), nan=0.0, posinf=0.0)
    above = p >= cp
    decay = np.where(above, 1.0, np.exp(-np.maximum(cp - p, 0.0) * dt / w_prime))
    shift = np.where(above, -(p - cp) * dt, w_prime * (1.0 - decay))
    unbounded = np.full(p.size, UNBOUNDED)
    return clamp_affine_scan(decay, shift, -unbounded, unbounded, w_prime)[1:]


#: Decline of the sustainable power per natural-log unit of duration beyond
#: :data:`LOG_FROM` [share of CP]. From memory of fits of the omni-domain model
#: (Puchowicz, Baker & Clarke 2020), where A was of the order of 5–10 % of CP for
#: trained riders [M]; not checked against the paper's tables.
LOG_DECLINE = 0.08
#: Duration [s] from which the log decline applies (T_CPmax = 30 min in the
#: omni-domain model [M]).
LOG_FROM = 1800.0


def sustainable_power_omni(duration: Floats, cp: float, w_prime: float) -> Floats:
    """Highest mean power [W] a rider can sustain for ``duration`` [s]: the
    critical-power model up to :data:`LOG_FROM`, with a logarithmic decline beyond.

    Parameters
    ----------
    duration : float or array [s], > 0
    cp : float [W] critical power
    w_prime : float [J] W′

    Returns
    -------
    float or array [W]; NaN for a duration that is not positive.

    Notes
    -----
    P(t) = CP + W′/t for t ≤ T (Monod & Scherrer 1965), and for t > T
    P(t) = CP + W′/t − A·CP·ln(t/T), the long-duration form of the omni-domain
    power–duration model (Puchowicz, Baker & Clarke 2020), with A
    :data:`LOG_DECLINE` and T :data:`LOG_FROM` (both from memory).

    References
    ----------
    Puchowicz, M. J., Baker, J. & Clarke, D. C. (2020). Development and field
    validation of an omni-domain power-duration model. *J. Sports Sci.*
    38(7):801–813 (journal details from memory). Monod, H. & Scherrer, J. (1965),
    *Ergonomics* 8:329–338.
    """
    t = np.asarray(duration, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        power = cp + w_prime / t - LOG_DECLINE * cp * np.log(np.maximum(t, LOG_FROM) / LOG_FROM)
    return np.where(t > 0, power, np.nan)[()]

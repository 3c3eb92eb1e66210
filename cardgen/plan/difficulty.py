"""How hard a climb is for one rider, beside the road's own difficulty band.

The band (:func:`cardgen.route.climbs.difficulty_band`, on the FIETS index) rates the
road, whoever rides it: a short ramp is "easy" though a rider's plan takes them above
their critical power on it, or a handcyclist crawls up it at 3 km/h. Where the band
understates what the rider's own plan shows, the climb gets words from that plan:

- ``walk``: the plan has the rider walking on the climb (below the balance speed of two
  wheels over a stretch, :mod:`cardgen.plan.walking`);
- ``crawl``: the planned speed is below :data:`CRAWL_SPEED` over
  :data:`CRAWL_LENGTH` of the climb or more, or on average over the whole climb (and
  the rider does not walk);
- ``above CP``: the plan's mean power on the climb is above the rider's critical
  power, so it draws on W′ (Skiba et al. 2012) and cannot be held for long, and it
  spends at least :data:`W_PRIME_SHARE` of the rider's W′ there. "Best" pacing goes a
  little above CP on most climbs by design (W′ is spent where it saves most time): a
  climb that costs a small part of W′ is no harder for the rider than its band says,
  and the word on every such climb told a rider nothing.

No band says that a rider must walk or crawl, so those words are always given; a band
of "hard" or harder already tells a rider to expect to work at their limit, so
``above CP`` is given only beside :data:`UNDERSTATING` bands. Which bands those are is
cardgen's own reading of its own bands: common practice, no published source.

References
----------
Skiba, P. F., Chidnok, W., Vanhatalo, A. & Jones, A. M. (2012). Modeling the
expenditure and reconstitution of work capacity above critical power. Med Sci Sports
Exerc 44(8):1526–1532.
"""

from __future__ import annotations

import numpy as np

from cardgen.units import KMH_PER_MS

#: Planned speed [m/s] below which a rider crawls: about walking pace (common practice,
#: no published source; on trails hand cyclists' 15th-percentile speed was 8 km/h,
#: FHWA-HRT-04-103, 2004 [V], twice this). The same figure as the three-wheelers'
#: "crawl" caution (:data:`cardgen.plan.rider.CRAWL_SPEED`).
CRAWL_SPEED = 4.0 / KMH_PER_MS
#: Crawling over at least this much of a climb [m] earns the word (as the caution).
CRAWL_LENGTH = 200.0
#: Share of the rider's W′ [-] the plan must spend on a climb (its W′ balance falling
#: from the foot to its lowest on the climb) for "above CP" to be said: half, where a
#: rider reaches the top with less than half the reserve they set off with. Common
#: practice, no published source.
W_PRIME_SHARE = 0.5
#: Bands that say less than "above CP" does.
UNDERSTATING = ("easy", "moderate")
#: The words, most severe first (the order they print in).
WORDS = ("walk", "crawl", "above CP")


def climb_words(
    band: str,
    *,
    cp: float,
    rider_power: float,
    walked: float,
    speed: np.ndarray,
    step: float,
    w_prime: float,
    w_prime_used: float,
) -> tuple[str, ...]:
    """The rider's words for a climb where its band understates the plan, most severe
    first; empty where the band says enough.

    Parameters
    ----------
    band : the climb's difficulty band (words)
    cp : [W] the rider's critical power
    rider_power : [W] the plan's time-weighted mean rider power on the climb
    walked : [m] walked on the climb by the plan
    speed : [m/s] planned mean speed on each segment of the climb
    step : [m] segment length
    w_prime : [J] the rider's W′
    w_prime_used : [J] the plan's W′ spent on the climb (balance at the foot minus its
        lowest on the climb)
    """
    speed = np.asarray(speed, dtype=float)
    words = []
    if walked > 0:
        words.append("walk")
    elif speed.size and (
        float(np.sum(speed < CRAWL_SPEED)) * step >= CRAWL_LENGTH
        or speed.size / float(np.sum(1.0 / np.maximum(speed, 1e-9))) < CRAWL_SPEED
    ):
        words.append("crawl")
    if rider_power > cp and w_prime_used >= W_PRIME_SHARE * w_prime and band in UNDERSTATING:
        words.append("above CP")
    return tuple(words)

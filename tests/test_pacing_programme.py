"""The W′ dynamic programme's backward pass against the Bellman recursion written out
here, one state at a time (Bellman 1957), with the W′ balance of Skiba et al. (2015)
moved by the exact solution of its differential form for a constant power (above CP:
W′ falls by (P − CP)·t; below: the gap to W′₀ shrinks by exp(−(CP − P)·t / W′₀))."""

from __future__ import annotations

import math

import numpy as np

from cardgen.plan.pacing import INFEASIBLE, W_LEVELS, _Programme


def _programme() -> tuple[_Programme, np.ndarray]:
    """A programme with levels above and below CP, W′ that runs out in some blocks
    (infeasible cells) and two runs of window blocks (a reset to full W′ between)."""
    rng = np.random.default_rng(7)
    powers = np.concatenate(([0.0], np.linspace(0.15 * 330.0, 330.0, 24)))
    times = rng.uniform(5.0, 90.0, size=(powers.size, 30))
    window = np.ones(30, dtype=bool)
    window[[0, 11, 12, 29]] = False
    programme = _Programme(powers, times, 240.0, 12_000.0, window, 0.01 * 12_000.0)
    kappas = np.array([15.0, 120.0, 900.0])
    cost = programme.times[None, :, :] * (powers[None, None, :] + kappas[:, None, None])
    return programme, cost


def _bellman(programme: _Programme, cost: np.ndarray, cp: float, w0: float, keep: float) -> np.ndarray:
    """Least cost to go by (block, multiplier, W′ level), state by state."""
    blocks, levels = programme.times.shape
    grid = [w0 * i / (W_LEVELS - 1) for i in range(W_LEVELS)]
    value = np.zeros((blocks + 1, cost.shape[0], W_LEVELS))
    for b in range(blocks - 1, -1, -1):
        ahead = value[b + 1].copy()
        if b + 1 < blocks and programme.resets[b + 1]:
            ahead[:, :] = ahead[:, -1:]  # the next run starts with W′ full
        for m in range(cost.shape[0]):
            for i, w in enumerate(grid):
                best = math.inf
                for j, power in enumerate(programme.powers):
                    t = programme.times[b, j]
                    if power >= cp:
                        after = w - (power - cp) * t
                    else:
                        after = w0 - (w0 - w) * math.exp(-(cp - power) * t / w0)
                    position = min(max(after, 0.0), w0) / w0 * (W_LEVELS - 1)
                    cell = min(int(position), W_LEVELS - 2)
                    share = position - cell
                    later = ahead[m, cell] * (1.0 - share) + ahead[m, cell + 1] * share
                    best = min(best, (later if after >= keep else INFEASIBLE) + cost[m, b, j])
                value[b, m, i] = best
    return value


def test_the_backward_pass_is_the_bellman_recursion():
    programme, cost = _programme()
    assert not programme.feasible.all() and programme.feasible.any()  # W′ does bind
    assert programme.resets.sum() == 2  # two runs
    reference = _bellman(programme, cost, 240.0, 12_000.0, 120.0)
    value = programme._backward(cost)
    assert np.all(value < INFEASIBLE)  # from every state some level is feasible here
    np.testing.assert_allclose(value, reference, rtol=1e-12, atol=0.0)


def test_the_backward_pass_keeps_the_earlier_arithmetic_bit_for_bit():
    """The in-place form gives the values of the earlier expression (gather, blend,
    mask, add, min) exactly, so the plans and the demo's figures stay as they were."""
    programme, cost = _programme()
    blocks = programme.times.shape[0]
    earlier = np.zeros((blocks + 1, cost.shape[0], W_LEVELS))
    for b in range(blocks - 1, -1, -1):
        ahead = earlier[b + 1]
        if b + 1 < blocks and programme.resets[b + 1]:
            ahead = np.repeat(ahead[:, -1:], W_LEVELS, axis=1)
        cell, frac = programme.cell[b], programme.frac[b]
        later = ahead[:, cell] * (1.0 - frac) + ahead[:, cell + 1] * frac
        total = np.where(programme.feasible[b], later, INFEASIBLE) + cost[:, b, None, :]
        earlier[b] = total.min(axis=2)
    assert np.array_equal(programme._backward(cost), earlier)


def test_the_forward_pass_keeps_the_earlier_choices():
    """The forward pass (the exact balance along each run, the best level against the
    values ahead) chooses exactly what the earlier expression chose."""
    programme, cost = _programme()
    value = programme._backward(cost)
    blocks = programme.times.shape[0]
    m = cost.shape[0]
    w0 = programme.w_prime
    earlier = np.empty((m, blocks), dtype=np.int64)
    w = np.full(m, w0)
    for b in range(blocks):
        if programme.resets[b]:
            w = np.full(m, w0)
        after = np.where(
            programme.above[None, :],
            w[:, None] - programme.spend[b][None, :],
            w0 - (w0 - w[:, None]) * programme.decay[b][None, :],
        )
        position = np.clip(after, 0.0, w0) / w0 * (W_LEVELS - 1)
        cell = np.minimum(position.astype(np.int64), W_LEVELS - 2)
        frac = position - cell
        ahead = value[b + 1]
        if b + 1 < blocks and programme.resets[b + 1]:
            ahead = np.repeat(ahead[:, -1:], W_LEVELS, axis=1)
        rows = np.arange(m)[:, None]
        later = ahead[rows, cell] * (1.0 - frac) + ahead[rows, cell + 1] * frac
        total = np.where(after >= programme.floor, later, INFEASIBLE) + cost[:, b, :]
        earlier[:, b] = np.argmin(total, axis=1)
        w = np.maximum(after[np.arange(m), earlier[:, b]], 0.0)
    chosen = programme._forward(cost, value)
    assert np.array_equal(chosen, earlier)
    assert np.unique(chosen).size > 3  # the levels do vary along the route
    # W′ never planned below the floor along the chosen levels (Skiba et al. 2015)
    for row in range(m):
        w = w0
        for b in range(blocks):
            if programme.resets[b]:
                w = w0
            j = chosen[row, b]
            t, power = programme.times[b, j], programme.powers[j]
            cp = 240.0
            w = w - (power - cp) * t if power >= cp else w0 - (w0 - w) * math.exp(-(cp - power) * t / w0)
            assert w >= programme.floor - 1e-9


def test_plans_worked_out_a_few_multipliers_at_a_time_are_those_of_all_at_once():
    """``_closest`` solves the programme from the lowest (or middle) multipliers
    outward until the means cross the target: for targets below, inside, above and
    between its multipliers' means, the κ and plan are those of the closest mean of
    every multiplier solved at once (what the earlier code did), and each row is the
    same bit for bit whatever it is solved with."""
    from cardgen.plan.pacing import FIRST_KAPPAS, _closest, _mean, _Tried

    programme, _ = _programme()
    powers, times = programme.powers, programme.all_times
    kappas = np.geomspace(20.0, 80.0, 16)
    every = programme.solve(kappas)
    means = _mean(powers, times, every)
    assert np.all(np.diff(means) >= 0) and means[-1] > means[0]  # the mean rises with κ
    assert np.array_equal(every[5:9], programme.solve(kappas[5:9]))
    targets = [means[0] - 5.0, means[1], 0.5 * (means[2] + means[3]), means[9] + 0.1, means[-1] + 5.0]
    for target in targets:
        want = int(np.argmin(np.abs(means - target)))
        for start in (0, None):
            tried = _Tried()
            kappa, plan = _closest(programme.solve, powers, times, target, kappas, start, tried)
            assert kappa == kappas[want]
            assert np.array_equal(plan, every[want])
            if start == 0 and want < FIRST_KAPPAS - 1:  # bracketed by the first few: no more solved
                assert len(tried.plans) == FIRST_KAPPAS

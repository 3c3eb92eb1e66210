"""Riders planned together: the W′ programmes of several riders solved in one pass.

The pacing programme (:class:`~cardgen.plan.pacing._Programme`) is limited by its
fixed cost per block (a dozen small numpy operations), not by its arithmetic: solving
the programmes of many riders at once, with a leading axis over riders, shares that
cost. Each rider keeps their own CP, W′, levels, block times, windows and
multipliers; a rider's programme is its own recursion over its own window blocks, so
the riders' blocks are lined up from the end of each window sequence (a shorter one
is padded at its front with blocks whose values are never used) and the route
positions need not agree.

:func:`plan_together` runs each rider's planning in its own thread, one thread at a
time (a hand-over, never two running at once): when a rider asks for a programme's
solve it waits, the next rider runs, and when every rider is waiting or done the
waiting solves are worked out together (:func:`solve_together`) and the riders go on
in the same order. Every operation of the batched passes is the per-rider pass's,
element by element, so each rider's levels are the ones the rider alone would get
(tests/test_plan_together.py).
"""

from __future__ import annotations

import threading
from collections.abc import Callable, Sequence
from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:
    from cardgen.plan.pacing import _Programme

#: Riders planned together at most (memory: each rider's transition arrays are
#: copied into the batch, a few MB each).
WIDTH = 12

_local = threading.local()


def solve(programme: _Programme, kappas: np.ndarray) -> np.ndarray:
    """The programme's levels for ``kappas`` (:meth:`_Programme.solve`), solved with
    other riders' when this thread plans in a group (:func:`plan_together`)."""
    group: _Worker | None = getattr(_local, "group", None)
    if group is None:
        return programme.solve(kappas)
    return group.ask(programme, kappas)


def plan_together(tasks: Sequence[Callable[[], Any]], width: int = WIDTH) -> list[Any]:
    """Each task's result, the tasks run ``width`` at a time with their programmes
    solved together; an exception of a task is raised here, after its group ends."""
    results: list[Any] = []
    for first in range(0, len(tasks), width):
        results.extend(_Group(tasks[first : first + width]).run())
    return results


class _Worker:
    def __init__(self, group: _Group, task: Callable[[], Any]):
        self.group, self.task = group, task
        self.go = threading.Event()
        self.result: Any = None
        self.error: BaseException | None = None
        self.asked: tuple[Any, np.ndarray] | None = None
        self.answer: np.ndarray | None = None
        self.thread = threading.Thread(target=self._main, daemon=True)

    def _main(self) -> None:
        self.go.wait()
        self.go.clear()
        _local.group = self
        try:
            self.result = self.task()
        except BaseException as error:  # handed to the caller of plan_together
            self.error = error
        finally:
            _local.group = None
            self.asked = None
            self.group.back.set()

    def ask(self, programme: _Programme, kappas: np.ndarray) -> np.ndarray:
        self.asked = (programme, kappas)
        self.group.back.set()
        self.go.wait()
        self.go.clear()
        answer, self.answer = self.answer, None
        assert answer is not None
        return answer

    def resume(self) -> None:
        """Let this worker run until it asks for a solve or ends."""
        self.group.back.clear()
        self.go.set()
        self.group.back.wait()


class _Group:
    def __init__(self, tasks: Sequence[Callable[[], Any]]):
        self.back = threading.Event()
        self.workers = [_Worker(self, task) for task in tasks]

    def run(self) -> list[Any]:
        for worker in self.workers:
            worker.thread.start()
        running = list(self.workers)
        while running:
            for worker in running:
                worker.resume()
            running = [w for w in running if w.asked is not None]
            if running:
                asked = [w.asked for w in running]
                for worker, answer in zip(running, solve_together(asked), strict=True):  # type: ignore[arg-type]
                    worker.answer, worker.asked = answer, None
        for worker in self.workers:
            worker.thread.join()
        for worker in self.workers:
            if worker.error is not None:
                raise worker.error
        return [w.result for w in self.workers]


def solve_together(asked: Sequence[tuple[_Programme, np.ndarray]]) -> list[np.ndarray]:
    """Levels of each (programme, kappas) pair: :meth:`_Programme.solve` of each,
    worked out with the others of the same number of multipliers in one pass."""
    out: list[np.ndarray | None] = [None] * len(asked)
    sizes: dict[int, list[int]] = {}
    for i, (_, kappas) in enumerate(asked):
        sizes.setdefault(int(kappas.size), []).append(i)
    for members in sizes.values():
        if len(members) == 1:
            programme, kappas = asked[members[0]]
            out[members[0]] = programme.solve(kappas)
            continue
        for i, levels in zip(members, _Stack([asked[i] for i in members]).solve(), strict=True):
            out[i] = levels
    return [levels for levels in out if levels is not None]


def _small_cell(programme: _Programme) -> np.ndarray:
    """The programme's W′ cells as int8 (0 … W − 2), kept with it: an eighth of the
    bytes to copy into each batch."""
    small: np.ndarray | None = getattr(programme, "small_cell", None)
    if small is None:
        small = programme.cell.astype(np.int8)
        setattr(programme, "small_cell", small)  # noqa: B010 (only batches use it)
    return small


class _Stack:
    """Programmes with the same number of multipliers, stacked on a leading rider
    axis (r), their window blocks lined up from the end (j), padded at the front."""

    def __init__(self, asked: Sequence[tuple[_Programme, np.ndarray]]):
        from cardgen.plan.pacing import INFEASIBLE, W_LEVELS, _independent

        self.infeasible_value, self.levels = INFEASIBLE, W_LEVELS
        self.asked = asked
        self.independent = [_independent(p.powers, p.all_times, k) for p, k in asked]
        sizes = [p.times.shape[0] for p, _ in asked]
        blocks, riders = max(sizes), len(asked)
        m = int(asked[0][1].size)
        self.pad = [blocks - size for size in sizes]
        shape = (riders, blocks)
        levels = asked[0][0].powers.size
        # empty, the padding filled below: it is a third of the cost of a batch
        self.cost = np.empty((riders, m, blocks, levels))
        self.cell = np.empty((*shape, W_LEVELS, levels), dtype=np.int8)  # 0 … W − 2
        self.frac = np.empty((*shape, W_LEVELS, levels))
        self.infeasible = np.empty((*shape, W_LEVELS, levels), dtype=bool)
        self.resets = np.zeros(shape, dtype=bool)
        self.spend = np.empty((*shape, levels))
        self.decay = np.empty((*shape, levels))
        self.above = np.stack([p.above for p, _ in asked])
        self.w_prime = np.asarray([p.w_prime for p, _ in asked], dtype=float)
        self.floor = np.asarray([p.floor for p, _ in asked], dtype=float)
        for r, ((p, kappas), pad) in enumerate(zip(asked, self.pad, strict=True)):
            if pad:  # blocks whose values are never used: any finite numbers
                for array in (self.cost[r, :, :pad], self.frac[r, :pad], self.spend[r, :pad]):
                    array.fill(0.0)
                self.cell[r, :pad] = 0
                self.infeasible[r, :pad] = False
                self.decay[r, :pad] = 1.0
            np.multiply(
                p.times[None, :, :],
                p.powers[None, None, :] + kappas[:, None, None],
                out=self.cost[r, :, pad:],
            )
            self.cell[r, pad:] = _small_cell(p)
            self.frac[r, pad:] = p.frac
            self.infeasible[r, pad:] = p.infeasible
            self.resets[r, pad:] = p.resets
            self.spend[r, pad:] = p.spend
            self.decay[r, pad:] = p.decay
        self.any_reset = [bool(x) for x in np.any(self.resets, axis=0).tolist()]  # per aligned block
        # offset of every (rider, multiplier) row in a flattened (r, m, W) array
        self.base = (np.arange(riders)[:, None] * m + np.arange(m)[None, :]) * W_LEVELS

    def solve(self) -> list[np.ndarray]:
        """Each programme's levels, as its own :meth:`_Programme.solve` gives them."""
        value = self._backward()
        chosen = self._forward(value)
        out = []
        for r, ((p, _), pad) in enumerate(zip(self.asked, self.pad, strict=True)):
            levels = self.independent[r]
            levels[:, p.inside] = chosen[r, :, pad:]
            out.append(levels)
        return out

    def _ahead(self, value: np.ndarray, j: int) -> np.ndarray:
        """The values after aligned block j, W′ full where a rider's next run starts."""
        ahead = value[j + 1]
        if j + 1 < self.resets.shape[1] and self.any_reset[j + 1]:
            ahead = np.where(self.resets[:, j + 1, None, None], ahead[:, :, -1:], ahead)
        return np.asarray(ahead)

    def _backward(self) -> np.ndarray:
        """Least cost from each aligned block on: (blocks + 1, r, m, W)."""
        riders, m, blocks, _ = self.cost.shape
        value = np.zeros((blocks + 1, riders, m, self.levels))
        base = self.base[:, :, None, None]
        for j in range(blocks - 1, -1, -1):
            flat = self._ahead(value, j).ravel()
            index = self.cell[:, j][:, None] + base  # (r, m, W, levels)
            total = flat.take(index)
            index += 1
            upper = flat.take(index)
            frac = self.frac[:, j][:, None]
            total *= 1.0 - frac  # the programme's keep_share, the same values
            upper *= frac
            total += upper
            np.copyto(total, self.infeasible_value, where=self.infeasible[:, j][:, None])
            total += self.cost[:, :, j, None, :]
            np.min(total, axis=3, out=value[j])
        return value

    def _forward(self, value: np.ndarray) -> np.ndarray:
        """The exact balance along each rider's window runs and the best level
        against the values ahead: (r, m, blocks)."""
        riders, m, blocks, _ = self.cost.shape
        chosen = np.empty((riders, m, blocks), dtype=np.int64)
        full = np.broadcast_to(self.w_prime[:, None], (riders, m))
        top = self.w_prime[:, None, None]
        w = full.copy()
        rows = np.arange(riders * m) * self.cost.shape[3]  # row offsets into (r·m, levels)
        for j in range(blocks):
            if self.any_reset[j]:
                w = np.where(self.resets[:, j][:, None], full, w)
            after = np.where(
                self.above[:, None, :],
                w[:, :, None] - self.spend[:, j][:, None, :],
                top - (top - w[:, :, None]) * self.decay[:, j][:, None, :],
            )
            position = np.clip(after, 0.0, top)
            position /= top
            position *= self.levels - 1
            cell = np.minimum(position.astype(np.int64), self.levels - 2)
            frac = position - cell
            flat = self._ahead(value, j).ravel()
            cell += self.base[:, :, None]
            total = flat.take(cell)
            total *= 1.0 - frac
            cell += 1
            upper = flat.take(cell)
            upper *= frac
            total += upper
            total[after < self.floor[:, None, None]] = self.infeasible_value
            total += self.cost[:, :, j, :]
            k = total.argmin(axis=2)
            chosen[:, :, j] = k
            w = np.maximum(after.ravel().take(rows + k.ravel()).reshape(riders, m), 0.0)
        return chosen

"""How long an iteration still has to go, for progress lines: steps to a tolerance from the recent
rate of convergence, and the time they take at the recent pace."""

from __future__ import annotations

import math
import time


def _duration(seconds: float) -> str:
    if seconds < 1:
        return "under 1 s"
    if seconds < 90:
        return f"{seconds:.0f} s"
    if seconds < 5400:
        return f"{seconds / 60:.0f} min"
    return f"{seconds / 3600:.1f} h"


class Countdown:
    """``Countdown(tol).update(residual)`` after each step: "" until three steps show a geometric rate
    of convergence, then ", about N more steps (T)". A residual that does not fall says so."""

    def __init__(self, tolerance: float, max_steps: int | None = None, clock=time.perf_counter):
        self.tolerance = tolerance
        self.max_steps = max_steps  # the iteration's limit: a rate too slow to reach the tolerance within it is said
        self.clock = clock
        self.points: list[tuple[float, float]] = []  # (time, residual)

    def update(self, residual: float) -> str:
        self.points.append((self.clock(), float(residual)))
        if len(self.points) < 3 or not residual > self.tolerance:
            return ""
        (t0, r0), (t1, r1) = self.points[-3], self.points[-1]
        if not (r0 > 0.0 and r1 > 0.0) or r1 >= r0:
            return ", not converging at the moment"
        rate = (r1 / r0) ** 0.5  # per step, over the last two
        steps = max(1, math.ceil(math.log(residual / self.tolerance) / -math.log(rate) - 1e-9))
        per_step = (t1 - t0) / 2.0
        if self.max_steps is not None and steps > self.max_steps - len(self.points):
            return f", too slow to reach {self.tolerance:.0e} in the {max(self.max_steps - len(self.points), 0)} steps left"
        return f", about {steps} more step{'s' if steps != 1 else ''} ({_duration(steps * per_step)})"


def remaining_time(done_seconds: list[float], left: int, growth: float = 1.0, workers: int = 1) -> str:
    """"about T left" for ``left`` more jobs, each ``growth`` times the one before (a grid level about twice
    the last), from the times of the jobs done; "" before the first."""
    if not done_seconds or left <= 0:
        return ""
    last = done_seconds[-1]
    total = sum(last * growth ** (k + 1) for k in range(left))
    return f", about {_duration(total / max(workers, 1))} left"

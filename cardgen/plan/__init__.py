"""Route × rider (vehicle and effort) × conditions → Plan: data only.

:mod:`~cardgen.plan.model` holds the frozen result types, :mod:`~cardgen.plan.rider`
makes one rider's plan, :mod:`~cardgen.plan.event` puts many plans together
(checkpoint windows). It knows nothing of GPX or HTML and makes no words: notices
carry codes and numbers.
"""

from cardgen.plan.event import CheckpointWindow, checkpoint_windows
from cardgen.plan.model import Analysis, ClimbRow, DescentRow, Notice, Plan, TimedCue, Totals
from cardgen.plan.rider import analyse, make_plan

__all__ = [
    "Analysis",
    "CheckpointWindow",
    "ClimbRow",
    "DescentRow",
    "Notice",
    "Plan",
    "TimedCue",
    "Totals",
    "analyse",
    "checkpoint_windows",
    "make_plan",
]

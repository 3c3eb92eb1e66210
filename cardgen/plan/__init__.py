"""Route × rider (vehicle and effort) × conditions → Plan: data only.

:mod:`~cardgen.plan.model` holds the frozen result types, :mod:`~cardgen.plan.rider`
makes one rider's plan, :mod:`~cardgen.plan.route_plans` plans every rider on one route (for the build and
the ``route`` command alike), :mod:`~cardgen.plan.event` puts many plans together
(checkpoint windows). It knows nothing of GPX or HTML and makes no words: notices
carry codes and numbers.
"""

from cardgen.plan.event import CheckpointWindow, checkpoint_windows
from cardgen.plan.model import Analysis, ClimbRow, DescentRow, Notice, Plan, TimedCue, Totals
from cardgen.plan.rider import analyse, make_plan
from cardgen.plan.route_plans import RoutePlans, plan_route

__all__ = [
    "Analysis",
    "CheckpointWindow",
    "ClimbRow",
    "DescentRow",
    "Notice",
    "Plan",
    "RoutePlans",
    "TimedCue",
    "Totals",
    "analyse",
    "checkpoint_windows",
    "make_plan",
    "plan_route",
]

"""The planning use case: prepare the site, plan, and turn an unmet requirement into an error."""

from __future__ import annotations

from typing import Callable

from cohop.errors import Conflict, PlanInfeasible, SiteError
from cohop.planning.deadline import Deadline
from cohop.planning.requirements import PlanRequirements, Progress
from cohop.planning.engine import NO_PLAN, PlanResult, SolveSettings, plan_site
from cohop.prepare import prepare_site
from cohop.site import Site


def run_plan(site: Site, requirements: PlanRequirements, settings: SolveSettings,
             progress: Callable[[Progress], None] | None = None, detail: str = "channel",
             deadline: Deadline | None = None) -> PlanResult:
    try:
        prep = prepare_site(site)
    except SiteError as err:
        raise err.under("/site") from None
    result = plan_site(prep, requirements, settings, progress, detail, deadline=deadline)
    if result.report.status == NO_PLAN:
        raise PlanInfeasible([Conflict(v.requirement, v.systems, v.detail, relax="raise the time limit or relax "
                                       "this requirement") for v in result.violations], proven=False)
    return result


def run_replan(site: Site, requirements: PlanRequirements, current, mode, settings: SolveSettings,
               deadline: Deadline | None = None):
    from cohop.planning.replan import replan_site

    try:
        prep = prepare_site(site)
    except SiteError as err:
        raise err.under("/site") from None
    result = replan_site(prep, requirements, current, mode, settings, deadline)
    if result.violations:
        raise PlanInfeasible([Conflict(v.requirement, v.systems, v.detail, relax="raise the time limit or the "
                                       "change budget, or relax this requirement") for v in result.violations],
                             proven=False)
    return result

"""Python client for the cohop planning service.

Depends on `requests` and the standard library only.
"""

from cohop_client.errors import (CohopError, Conflict, FieldError, InvalidRequest, NoFeasiblePlan, RequestTimeout,
                                 ServerError, TransportError)
from cohop_client.results import (Assessment, BaselineResult, Finding, Health, Plan, PlannedSystem, Profile, Replan,
                                  Rule, SolverReport, SystemChange, SystemResult)
from cohop_client.plans import PlanShapeError, apply_plan, current_plan, planned_systems
from cohop_client.session import Client

__all__ = [
    "Client", "CohopError", "TransportError", "RequestTimeout", "InvalidRequest", "ServerError", "FieldError",
    "NoFeasiblePlan", "Conflict", "Assessment", "SystemResult", "Finding", "Health", "Profile", "Rule", "Plan",
    "PlannedSystem", "SolverReport", "BaselineResult", "Replan", "SystemChange", "apply_plan", "current_plan",
    "planned_systems", "PlanShapeError",
]

"""Regulatory profiles (data with citations) and compliance checks.

These are planning aids: the operator is responsible for compliance, and
local rules and the regulator's current text prevail.
"""

from cohop.regulatory.profiles import PROFILES, get_profile
from cohop.regulatory.compliance import check_compliance

__all__ = ["PROFILES", "get_profile", "check_compliance"]

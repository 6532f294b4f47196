"""Games in value form -> exact solution concepts, the least core with its proof, and repairs.

Every function takes a `pactlang.game.Game` (value form: costs arrive
negated) and returns exact Fractions. Floating point only guides searches;
every returned number is verified exactly, or an exception says why not.
"""

from .errors import NotApplicable, SolverError
from .kohlberg import kohlberg_check
from .least_core import LeastCore, certificate_value, least_core
from .nucleolus import nucleolus
from .repair import Repair, nearest_stable_payout
from .rules import equal_split, proportional, separable_costs_remaining_benefits
from .shapley import shapley

__all__ = [
    "LeastCore",
    "NotApplicable",
    "Repair",
    "SolverError",
    "certificate_value",
    "equal_split",
    "kohlberg_check",
    "least_core",
    "nearest_stable_payout",
    "nucleolus",
    "proportional",
    "separable_costs_remaining_benefits",
    "shapley",
]

"""The rule catalogue: pure functions of a LinkContext that yield Findings.

``evaluate`` runs every rule on one link and applies the precedence of
diagnoses over generic mismatches. Reporters, selection and severity
overrides live above this package.
"""

from __future__ import annotations

from linkcheck.checks import compare, physical, tree
from linkcheck.checks.context import LinkContext
from linkcheck.model import Finding

ALL_RULES = physical.RULES + compare.RULES + tree.RULES
#: Missing SDF children whose defaults (1 kg m²) fill the tensor, and the rules they would trip.
DEFAULTED_TENSOR = frozenset({"inertia", "ixx", "iyy", "izz"})
TENSOR_RULES = frozenset({"inertia-not-positive-definite", "inertia-triangle-inequality", "inertia-exceeds-geometry",
                          "inertia-placeholder", "inertia-mismatch", "inertia-units-suspect"})


def evaluate(ctx: LinkContext) -> list[Finding]:
    """Every finding of one link, after precedence."""
    found = [f for rule in ALL_RULES for f in rule(ctx)]
    names = {f.rule for f in found}
    replaced = {r for name in names for r in compare.PRECEDENCE.get(name, ())}
    if any(f.rule == "density-implausible" and f.data.get("tensor_fits_mass") for f in found):
        replaced |= {"inertia-units-suspect", "inertia-mismatch"}  # the mass is off, not the tensor
    if ctx.inertial is not None and set(ctx.inertial.missing) & DEFAULTED_TENSOR:
        replaced |= TENSOR_RULES  # the tensor is SDF's silent defaults: inertial-incomplete says so
    return [f for f in found if f.rule not in replaced]

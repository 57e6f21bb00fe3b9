"""The rule catalogue as data: names, default severities, one-line summaries and help.

Names are the interface (configuration, suppressions, SARIF rule ids): keep them
stable. SARIF's driver.rules, ``--select``/``--ignore`` validation and the
README table all read this one table. Thresholds are named by their
configuration key so the help says what to change.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Iterable

if TYPE_CHECKING:
    from linkcheck.model import Severity


@dataclass(frozen=True)
class Rule:
    """One rule: ``fix`` names the flag that repairs it, or "none"."""

    name: str
    severity: Severity
    summary: str
    help: str
    fix: str = "none"


_CATALOGUE: tuple[Rule, ...] = (
    Rule(
        "xml-malformed",
        "error",
        "The file is not well-formed XML, not a robot description, or uses refused XML features.",
        "The file could not be read as a URDF or SDFormat description: the XML is not well-formed, "
        "the root element is not <robot> or <sdf>, or the document declares entities or an internal "
        "DTD subset, which are refused because they can read other files or expand without bound. "
        "Fix the XML at the reported line; remove any <!DOCTYPE ...[ ... ]> block.",
    ),
    Rule(
        "value-malformed",
        "error",
        "A required number is missing or does not parse.",
        "A value such as mass, ixx or xyz is missing, is not a number ('1,5' with a decimal comma, "
        "'abc'), or is not finite (nan, inf). Simulators read such values as 0 or refuse the model. "
        "Write plain decimal numbers with a decimal point.",
    ),
    Rule(
        "mesh-unavailable",
        "error",
        "A mesh URI does not resolve, or the mesh file is missing, unreadable or corrupt.",
        "The mesh named by a <mesh filename> (URDF) or <uri> (SDFormat) could not be found or read, "
        "or it contains no triangles. package:// URIs are resolved through the package-paths setting "
        "and the environment, model:// through model-paths; relative paths are relative to the "
        "description file. The message lists the places that were tried.",
    ),
    Rule(
        "inertial-missing",
        "warning",
        "A link has geometry but no inertial block.",
        "Without <inertial>, URDF treats the link as massless and SDFormat simulators silently give it "
        "1 kg and a unit inertia tensor. Add a block, or let --fill-missing compute one from the "
        "geometry with a per-link mass or a density (default-density or a [[links]] section).",
        "--fill-missing",
    ),
    Rule(
        "mass-not-positive",
        "error",
        "The stated mass is zero or negative.",
        "A rigid body needs a mass greater than zero; physics engines reject or clamp it. "
        "Give the real mass, or run --fix with --density (or default-density) to set "
        "mass = density x volume and recompute the centre of mass and tensor.",
        "--fix --density",
    ),
    Rule(
        "inertia-not-positive-definite",
        "error",
        "A principal moment of inertia is zero or negative.",
        "Every principal moment of a real body is positive. A moment counts as zero when it is below "
        "tensor-rtol (default 1e-6) times the trace, so a rod with izz = 0 is reported. "
        "--fix recomputes the tensor from the geometry at the stated mass.",
        "--fix",
    ),
    Rule(
        "inertia-triangle-inequality",
        "error",
        "The principal moments violate I1 + I2 >= I3.",
        "For any rigid body the sum of two principal moments is at least the third (equality only for "
        "a flat plate), within tensor-rtol (default 1e-6) times the trace. A tensor that breaks it "
        "cannot belong to any body and simulators reject it. --fix recomputes the tensor from the "
        "geometry at the stated mass.",
        "--fix",
    ),
    Rule(
        "inertia-exceeds-geometry",
        "error",
        "The moments are larger than any body of that mass inside the geometry could have.",
        "Half the trace of the tensor exceeds exceeds-geometry-factor (default 1.01) times m R^2, "
        "where R is the largest distance from the centre of the geometry's bounding box to its "
        "surface. No mass distribution inside the geometry reaches that, whatever the density. "
        "Usually a unit error or a copied tensor; --fix recomputes it.",
        "--fix",
    ),
    Rule(
        "inertia-placeholder",
        "warning",
        "The tensor holds filler values instead of the body's inertia.",
        "The tensor is exactly the identity, SDFormat's silent default (mass 1, diag(1, 1, 1)), or "
        "three moments equal within placeholder-equal-tolerance (default 1%) with zero products on a "
        "body whose own largest/smallest moment ratio exceeds placeholder-anisotropy (default 1.5). "
        "--fix replaces it with the geometry's tensor at the stated mass.",
        "--fix",
    ),
    Rule(
        "inertia-wrong-reference-point",
        "warning",
        "The tensor is given about the link origin instead of about the centre of mass.",
        "The stated tensor matches the geometry's inertia about the link origin within "
        "reference-point-tolerance (default 10%), and moving it there matters (changes it by more "
        "than reference-point-matters, default 30%). URDF and SDFormat want it about the centre of "
        "mass. --fix shifts your tensor with the parallel axis theorem and keeps your data.",
        "--fix",
    ),
    Rule(
        "inertia-product-sign",
        "warning",
        "The products of inertia have the wrong sign.",
        "The tensor matches the estimate once ixy, ixz and iyz are negated. CAD tools often list "
        "products of inertia as +integral(xy dm), while URDF and SDFormat entries are "
        "-integral(xy dm). Reported when the products are more than product-sign-matters (default "
        "10%) of the tensor's norm. --fix negates your products.",
        "--fix",
    ),
    Rule(
        "inertia-units-suspect",
        "warning",
        "The tensor is off by a power of a thousand (g/kg or mm/m mix-up).",
        "The stated tensor equals the estimate times 10^k for k in +-3, +-6, +-9 within "
        "units-tolerance (default 25%): grams for kilograms, or millimetres for metres. "
        "--fix rescales your tensor by the power found.",
        "--fix",
    ),
    Rule(
        "density-implausible",
        "warning",
        "Mass divided by the geometry's volume is outside the plausible density range.",
        "The implied density lies outside density-range (default [50, 25000] kg/m^3). The message "
        "says whether the mass looks like a unit error, a sub-gram filler, or the collision geometry "
        "a placeholder far smaller or larger than the part. The mass is yours: nothing is fixed.",
    ),
    Rule(
        "com-outside-geometry",
        "warning",
        "The stated centre of mass lies outside the link's geometry.",
        "The centre of mass of any body lies inside the convex hull of its material. The stated one is "
        "outside it by more than com-outside-tolerance (default 1%) of L, the diagonal of the link's "
        "bounding box. Often a frame or sign mistake; --fix recomputes it from the geometry.",
        "--fix",
    ),
    Rule(
        "com-offset",
        "warning",
        "The stated centre of mass is far from the geometry's centroid.",
        "The distance between the stated centre of mass and the uniform-density centroid exceeds "
        "com-offset-warn (default 0.25) times L, the diagonal of the link's bounding box (an info "
        "finding above com-offset-info, default 0.10). Real parts are not uniform, so check the "
        "number before replacing it; --recompute takes the centroid.",
        "--recompute",
    ),
    Rule(
        "inertia-mismatch",
        "warning",
        "The stated tensor is far from the uniform-density estimate.",
        "Two numbers in link-frame axes: scale s = trace(stated)/trace(estimate) and shape q, the "
        "relative difference of the trace-normalised tensors (catches swapped axes). It warns when s "
        "is outside [1/mismatch-scale-warn, mismatch-scale-warn] (default 3) or q > "
        "mismatch-shape-warn (default 0.5), and is info beyond mismatch-scale-info (1.5) or "
        "mismatch-shape-info (0.2). --recompute takes the estimate at the stated mass.",
        "--recompute",
    ),
    Rule(
        "inertial-incomplete",
        "warning",
        "An SDFormat inertial block leaves children out, and simulators fill in defaults.",
        "SDFormat fills a missing <mass> with 1, a missing <ixx>/<iyy>/<izz> with 1 and missing "
        "products with 0, silently. The message names the values that were filled in. --fix writes "
        "the missing values from the geometry.",
        "--fix",
    ),
    Rule(
        "estimate-unavailable",
        "info",
        "No usable geometry: the comparisons with the estimate were skipped.",
        "The link has no geometry the estimate can use (none, only planes or heightmaps, or a mesh "
        "that cannot be trusted, e.g. while mesh-units-suspect holds), so only the physical tests "
        "ran. Add collision geometry, or choose geometry = \"visual\".",
    ),
    Rule(
        "mesh-not-watertight",
        "warning",
        "The mesh has holes; its volume is an upper bound from the convex hull.",
        "A mesh with holes or inconsistent winding has no well-defined volume. The estimate used its "
        "convex hull, which overstates volume and moments. Close the mesh in a modelling tool for an "
        "exact estimate.",
    ),
    Rule(
        "mesh-inside-out",
        "info",
        "The mesh's faces wind inwards (negative volume); it was integrated flipped.",
        "All faces are consistently wound the wrong way, so the signed volume is negative. The "
        "estimate flipped the orientation, which gives exact results; re-export the mesh with "
        "outward normals to silence this.",
    ),
    Rule(
        "mesh-units-suspect",
        "warning",
        "The mesh's size or the stated block suggests a mesh in other units (mm, cm, inch) without its scale.",
        "The scaled mesh is larger than mesh-max-extent (default 5 m) or smaller than mesh-min-extent "
        "(default 1 mm) across, or the implied density is off by about a unit factor cubed (10^9 for "
        "millimetres). The scale offered is the unit factor that brings the mesh into range and, when "
        "the link states a mass, makes the density plausible and fits the stated tensor and centre of "
        "mass (a 200 mm part in inches gets 0.0254, not 0.001). When the stated tensor cannot tell "
        "(a filler, impossible, or zero) the message says that either the mesh is in that unit or the "
        "mass is wrong; when the tensor fits the scale but the density is still 1000x off it names a "
        "mass in grams (or tonnes) as well. With several meshes on a link, the one mesh a unit factor "
        "explains is named. Set the <mesh> scale (0.001 for millimetres). While this holds the estimate "
        "of the link is not used: nothing blames or rewrites its tensor or mass.",
    ),
    Rule(
        "massless-moving-link",
        "warning",
        "A link behind a movable joint carries no mass.",
        "The child subtree of a movable joint has no mass, so the joint cannot be simulated "
        "(massless frames behind fixed joints are fine). Give the link an inertial block; "
        "--fill-missing computes one from its geometry with a mass or density.",
        "--fill-missing",
    ),
    Rule(
        "geometry-note",
        "info",
        "What was read, and how the estimate was made, where it matters.",
        "Says how a link's uniform-density estimate was built when that is not the plain default, or what "
        "could not be part of it: a shape without volume (plane, heightmap, ...) was skipped, the visual "
        "geometry was used because the collision proxy is far too small for the stated mass, a package "
        "was found by its folder name rather than its package.xml, an SDF <include> was not found, a "
        "mesh's COLLADA up_axis would explain the stated centre of mass. Nothing to fix; read it before "
        "trusting a comparison.",
    ),
    Rule(
        "suppression-unused",
        "info",
        "An inline 'linkcheck: allow' comment silenced nothing.",
        "The comment <!-- linkcheck: allow RULE - reason --> allows a rule on one link, but that "
        "rule did not fire there (or no rule has that name). Remove the stale comment, or correct "
        "the rule name.",
    ),
)

RULES: dict[str, Rule] = {r.name: r for r in _CATALOGUE}


def unknown_rules(names: Iterable[str]) -> list[str]:
    """The names in ``names`` that are not rules, in order (for option and config validation)."""
    return [n for n in names if n not in RULES]


def suggest(name: str) -> str | None:
    """The closest rule name to a misspelt one, or None."""
    import difflib

    match = difflib.get_close_matches(name, list(RULES), n=1, cutoff=0.6)
    return match[0] if match else None


def catalogue_markdown() -> str:
    """The README's rule table: name, default severity, summary, fixing flag."""
    rows = ["| rule | default | meaning | fixed by |", "|---|---|---|---|"]
    for r in RULES.values():
        fix = "—" if r.fix == "none" else f"`{r.fix}`"
        rows.append(f"| `{r.name}` | {r.severity} | {r.summary.replace('|', '/')} | {fix} |")
    return "\n".join(rows) + "\n"

"""Decide the corrected mass properties of one link from its findings.

A plan is data: the new block in the link frame, what to write, and a one-line
summary. Nothing here touches files; the format writers splice the plan in.
Fix policy (DESIGN.md): errors and fillers take the uniform-density estimate at
the stated mass; unit, reference-point and product-sign diagnoses keep the
user's numbers; far-from-estimate blocks change only with ``recompute``;
missing blocks are added only with ``fill_missing`` and a mass source.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from linkcheck import inertia as mp
from linkcheck.checks.context import LinkContext
from linkcheck.estimate import density_mass
from linkcheck.formats.numbers import InertialEdit
from linkcheck.inertia import MassProperties
from linkcheck.model import Finding

#: Rules no fix can repair: the data a fix would need is not there.
NEVER_FIXABLE = ("value-malformed", "mesh-unavailable", "estimate-unavailable")
#: Impossible or filler blocks: replaced by the estimate at the stated mass.
ESTIMATE_RULES = (
    "inertia-not-positive-definite",
    "inertia-triangle-inequality",
    "inertia-exceeds-geometry",
    "inertia-placeholder",
    "com-outside-geometry",
    "inertial-incomplete",
)
#: Of those, the ones a corrected tensor alone can clear (re-checked on the candidate).
TENSOR_RULES = ("inertia-not-positive-definite", "inertia-triangle-inequality", "inertia-exceeds-geometry")
#: Diagnoses that explain the block and keep the user's own numbers.
KEEP_RULES = ("inertia-units-suspect", "inertia-wrong-reference-point", "inertia-product-sign")
RECOMPUTE_RULES = ("com-offset", "inertia-mismatch")
FILL_RULES = ("inertial-missing", "massless-moving-link")
MASS_RULES = ("mass-not-positive",)

#: SDFormat's density when a collision and its link give none (kg/m^3, water).

ESTIMATE_NOTE = "uniform-density estimate"
TENSOR_KEYS = ("ixx", "ixy", "ixz", "iyy", "iyz", "izz")
_TENSOR_INDEX = {"ixx": (0, 0), "ixy": (0, 1), "ixz": (0, 2), "iyy": (1, 1), "iyz": (1, 2), "izz": (2, 2)}
#: Tensor entries below this fraction of the trace are rounding noise, written as 0.
NOISE = 1e-14
#: At most this many "old -> new" items in a summary line.
SUMMARY_ITEMS = 6


@dataclass(frozen=True)
class FixOptions:
    """What the user allowed: ``recompute`` and ``fill_missing`` widen ``fix``."""

    fix: bool = True
    recompute: bool = False
    fill_missing: bool = False
    density: float | None = None  # kg/m^3, --density
    keep_frame: bool = False


@dataclass(frozen=True)
class FixPlan:
    """The corrected block of one link.

    ``new`` is in the link frame (tensor about the COM, link axes); ``edit`` is
    what the writer puts in the file (possibly in the block's rotated frame).
    ``estimated`` is True when the values came from the uniform-density estimate.
    """

    link: str
    new: MassProperties
    edit: InertialEdit
    rules: tuple[str, ...]
    estimated: bool
    summary: str


@dataclass(frozen=True)
class Refusal:
    """A finding the fix leaves alone, and why (shown to the user)."""

    link: str
    rule: str
    reason: str


@dataclass(frozen=True)
class MassSource:
    """A mass for a link without a usable one, and where it came from (for the summary)."""

    mass: float
    origin: str


def plan_fix(ctx: LinkContext, findings: list[Finding], options: FixOptions) -> FixPlan | Refusal | None:
    """The one coherent fix of ``ctx``'s link for its findings, a Refusal saying why not, or None.

    None means nothing to do under ``options`` (no finding a fix flag covers).
    """
    # a duplicate block is a warning about the file, not a value the fix would need
    mine = [f for f in findings if f.link in (None, ctx.name) and not f.data.get("duplicate")]
    rules = {f.rule for f in mine}
    active = _active_rules(rules, options)
    blocking = [r for r in NEVER_FIXABLE if r in rules]
    if not active:
        # estimate-unavailable alone blocks nothing: its own message already says why.
        shown = [r for r in blocking if r != "estimate-unavailable"
                 and any(f.rule == r and not f.data.get("xacro") for f in mine)]  # xacro notes are no request
        if shown and _fixing(options):
            return Refusal(ctx.name, shown[0], _never_reason(ctx, shown[0], mine))
        return None
    for rule in ("value-malformed", "mesh-unavailable"):
        if rule in rules:
            return Refusal(ctx.name, active[0], _never_reason(ctx, rule, mine))
    if len(ctx.group) > 1:
        return Refusal(ctx.name, active[0], "judged as one rigid body with " + ", ".join(ctx.group)
                       + "; a fix rewrites single links only")
    if ctx.link.inertial is not None and ctx.link.inertial.auto:  # ctx.inertial is None for these (runner)
        return Refusal(ctx.name, active[0], 'the block is auto="true": the simulator computes it from the '
                       "collisions, so written values would be ignored")

    if any(r in active for r in FILL_RULES + MASS_RULES) or ctx.stated is None:
        return _plan_with_mass_source(ctx, mine, active, options)
    return _plan_stated(ctx, mine, active, options)


def _fixing(options: FixOptions) -> bool:
    return options.fix or options.recompute or options.fill_missing


def _active_rules(rules: set[str], options: FixOptions) -> tuple[str, ...]:
    """The rules a fix under ``options`` should act on, in catalogue order."""
    allowed: list[str] = []
    if _fixing(options):
        allowed += ESTIMATE_RULES + KEEP_RULES + MASS_RULES
    if options.recompute:
        allowed += RECOMPUTE_RULES
    if options.fill_missing:
        allowed += FILL_RULES
    return tuple(r for r in allowed if r in rules)


def _never_reason(ctx: LinkContext, rule: str, findings: list[Finding]) -> str:
    if rule == "value-malformed":
        if any(f.rule == rule and f.data.get("xacro") for f in findings):
            return "the link holds xacro expressions; edit the .xacro source (expand it with xacro to check the numbers)"
        return "a value of the link does not parse; correct it by hand (the fix never guesses numbers)"
    if rule == "mesh-unavailable":
        return "a mesh of the link gives no estimate (see mesh-unavailable), so its geometry is unknown; fix the mesh first"
    reason = ctx.estimate_reason or next((f.message for f in findings if f.rule == rule), "")
    return f"no geometry estimate to take values from ({reason})" if reason else "no geometry estimate to take values from"


def _no_estimate(ctx: LinkContext, rule: str) -> Refusal:
    why = ctx.estimate_reason or "the link has no usable geometry"
    return Refusal(ctx.name, rule, f"the fix needs the geometry estimate, which is unavailable: {why}")


# --- blocks with a stated, usable mass ------------------------------------------------------------


def _plan_stated(ctx: LinkContext, findings: list[Finding], active: tuple[str, ...], options: FixOptions) -> FixPlan | Refusal:
    stated = ctx.stated
    assert stated is not None
    keep = [r for r in active if r in KEEP_RULES]
    hard = [r for r in active if r in ESTIMATE_RULES]
    fallback_why = ""
    if keep and not [r for r in hard if r not in TENSOR_RULES]:
        candidate, why = _keep_candidate(ctx, findings, keep)
        if candidate is not None:
            problem = validity_problem(candidate, ctx)
            if problem is None and options.recompute and _far_from_estimate(candidate, ctx):
                problem = "it is still far from the geometry estimate and --recompute is on"
            if problem is None:
                return _make_plan(ctx, candidate, tuple(active), estimated=False, note=why, options=options)
            fallback_why = f"the stated tensor {why} {problem}"
        else:
            fallback_why = why
    mass, mass_note = stated.mass, ""
    if ctx.inertial is not None and "mass" in ctx.inertial.missing:
        source = mass_source(ctx, options)  # the 1 kg the format filled in is nobody's measurement
        if source is not None:
            mass, mass_note = source.mass, f"mass from {source.origin}; "
    est = ctx.estimate_at_mass(mass)
    if est is None:
        return _no_estimate(ctx, active[0])
    problem = validity_problem(est, ctx)
    if problem is not None:
        return Refusal(ctx.name, active[0], f"the geometry estimate {problem}; give the inertial block by hand")
    note = mass_note + ESTIMATE_NOTE + (f"; {fallback_why}" if fallback_why else "")
    return _make_plan(ctx, est, tuple(active), estimated=True, note=note, options=options)


def _keep_candidate(ctx: LinkContext, findings: list[Finding], keep: list[str]) -> tuple[MassProperties | None, str]:
    """The user's block with the diagnosed mistake undone, and a short word for the note."""
    stated = ctx.stated
    assert stated is not None
    tensor = np.array(stated.inertia, dtype=float)
    notes = []
    for rule in keep:
        if rule == "inertia-units-suspect":
            power = next((f.data.get("power") for f in findings if f.rule == rule and "power" in f.data), None)
            if power is None:
                return None, "the units finding carries no power of ten"
            tensor = tensor / 10.0 ** int(power)
            notes.append(f"rescaled by 1e{-int(power)}")
        elif rule == "inertia-wrong-reference-point":
            tensor = mp.shift_to_com(tensor, stated.mass, stated.com)
            notes.append("shifted to the COM by the parallel axis theorem")
        elif rule == "inertia-product-sign":
            tensor = tensor * np.where(np.eye(3, dtype=bool), 1.0, -1.0)
            notes.append("with its products negated")
    tensor = (tensor + tensor.T) / 2
    return MassProperties(stated.mass, np.asarray(stated.com, dtype=float), tensor), ", ".join(notes)


def validity_problem(props: MassProperties, ctx: LinkContext) -> str | None:
    """Why ``props`` would fail a hard physical rule again, or None when it passes them all."""
    rtol = ctx.settings.tensor_rtol
    tensor = np.asarray(props.inertia, dtype=float)
    if not (np.isfinite(props.mass) and props.mass > 0):
        return "has no positive mass"
    if not (mp.is_finite(tensor) and np.all(np.isfinite(props.com))):
        return "is not finite"
    if not mp.is_positive_definite(tensor, rtol):
        return "is not positive definite"
    if not mp.satisfies_triangle(tensor, rtol):
        return "breaks the triangle inequality"
    if ctx.estimate is not None and len(ctx.estimate.points):
        pts = np.asarray(ctx.estimate.points, dtype=float)
        centre = (pts.min(axis=0) + pts.max(axis=0)) / 2
        radius = float(np.sqrt(np.max(np.sum((pts - centre) ** 2, axis=1))))
        if np.trace(tensor) / 2 > ctx.settings.exceeds_geometry_factor * props.mass * radius**2:
            return "is larger than any body of that mass inside the geometry could have"
    return None


def _far_from_estimate(props: MassProperties, ctx: LinkContext) -> bool:
    """Whether com-offset or inertia-mismatch would still report (at any severity) on ``props``."""
    est = ctx.estimate_at_mass(props.mass)
    if est is None:
        return False
    s = ctx.settings
    length = ctx.diagonal
    if length > 0 and np.linalg.norm(np.asarray(props.com) - est.com) > s.com_offset_info * length:
        return True
    t_est, t_new = float(np.trace(est.inertia)), float(np.trace(props.inertia))
    if t_est <= 0 or t_new <= 0:
        return False
    scale = t_new / t_est
    shape = np.linalg.norm(props.inertia / t_new - est.inertia / t_est) / np.linalg.norm(est.inertia / t_est)
    return bool(not (1 / s.mismatch_scale_info <= scale <= s.mismatch_scale_info) or shape > s.mismatch_shape_info)


# --- blocks that need a mass from elsewhere -------------------------------------------------------


def _plan_with_mass_source(
    ctx: LinkContext, findings: list[Finding], active: tuple[str, ...], options: FixOptions
) -> FixPlan | Refusal:
    rule = next((r for r in active if r in FILL_RULES + MASS_RULES), active[0])
    if ctx.estimate is None or ctx.estimate.volume <= 0:
        if not any(b.shape is not None for b in ctx.link.bodies):
            return Refusal(ctx.name, rule, f"link '{ctx.name}' has no geometry to estimate an inertia from; "
                           "write its inertial block by hand, give it collision geometry, or make the joint fixed")
        return _no_estimate(ctx, rule)
    source = mass_source(ctx, options)
    if source is None:
        return Refusal(ctx.name, rule, _no_mass_reason(ctx, rule))
    est = ctx.estimate_at_mass(source.mass)
    assert est is not None
    problem = validity_problem(est, ctx)
    if problem is not None:
        return Refusal(ctx.name, rule, f"the geometry estimate {problem}; give the inertial block by hand")
    note = f"mass from {source.origin}; {ESTIMATE_NOTE}"
    return _make_plan(ctx, est, active, estimated=True, note=note, options=options)


def _no_mass_reason(ctx: LinkContext, rule: str) -> str:
    what = {
        "inertial-missing": "has geometry but no inertial block",
        "massless-moving-link": "moves on a joint but carries no mass",
        "mass-not-positive": "has a mass that is not positive",
    }.get(rule, "has no usable mass")
    return (
        f"link '{ctx.name}' {what}; give a mass or density: --density KG_M3, "
        f"or [[tool.linkcheck.links]] pattern=\"{ctx.name}\" mass=KG (or density=KG_M3)"
    )


def mass_source(ctx: LinkContext, options: FixOptions) -> MassSource | None:
    """Mass for a link from, in order: per-link mass, per-link density, --density or the
    configured default density, the SDF collision densities; None when there is none."""
    volume = ctx.estimate.volume if ctx.estimate is not None else 0.0
    own = ctx.settings.for_link(ctx.name)
    if own.mass is not None and own.mass > 0:
        return MassSource(float(own.mass), f"the per-link mass for '{ctx.name}'")
    if volume <= 0:
        return None
    if own.density is not None and own.density > 0:
        return MassSource(own.density * volume, f"the per-link density {own.density:g} kg/m^3 for '{ctx.name}'")
    if options.density is not None and options.density > 0:
        return MassSource(options.density * volume, f"--density {options.density:g} kg/m^3")
    default = ctx.settings.default_density
    if default is not None and default > 0:
        return MassSource(default * volume, f"the configured default density {default:g} kg/m^3")
    return _sdf_density_mass(ctx, volume)


def _sdf_density_mass(ctx: LinkContext, volume: float) -> MassSource | None:
    """Density-weighted mass of the collision bodies when any states an SDF <density>."""
    if ctx.geometry_source not in (None, "collision") or not any(b.density is not None for b, _ in ctx.volumes):
        return None
    link_density = ctx.inertial.density if ctx.inertial is not None else None
    mass, densities = density_mass(ctx.volumes, link_density)
    if len(densities) == 1:
        return MassSource(mass, f"the SDF collision density {densities[0]:g} kg/m^3")
    return MassSource(mass, "the SDF collision densities")


# --- what to write, and the summary line ----------------------------------------------------------


def _make_plan(
    ctx: LinkContext, new: MassProperties, rules: tuple[str, ...], *, estimated: bool, note: str, options: FixOptions
) -> FixPlan:
    tensor = np.asarray(new.inertia, dtype=float)
    tensor = (tensor + tensor.T) / 2
    # Cancellation noise (1e-17 products after a shift) would otherwise be written as digits.
    tensor[np.abs(tensor) <= NOISE * abs(float(np.trace(tensor)))] = 0.0
    new = MassProperties(float(new.mass), np.asarray(new.com, dtype=float), tensor)
    edit = make_edit(new, ctx, options.keep_frame)
    return FixPlan(ctx.name, new, edit, rules, estimated, summary_line(ctx, edit, rules, note))


def make_edit(new: MassProperties, ctx: LinkContext, keep_frame: bool) -> InertialEdit:
    """Link-frame axes (rotation identity) unless ``keep_frame`` and the block used a rotated frame."""
    if keep_frame and ctx.inertial is not None and ctx.inertial.frame_rotated:
        r = np.asarray(ctx.inertial.rotation, dtype=float)
        frame = r.T @ new.inertia @ r
        return InertialEdit(new.mass, np.array(new.com, dtype=float), r.copy(), (frame + frame.T) / 2)
    return InertialEdit(new.mass, np.array(new.com, dtype=float), np.eye(3), np.array(new.inertia, dtype=float))


def _fmt_pair(old: float, new: float) -> tuple[str, str]:
    """Shortest %g forms (4 to 12 digits) that show the two numbers differ."""
    old, new = old + 0.0, new + 0.0
    for digits in range(4, 13):
        a, b = f"{old:.{digits}g}", f"{new:.{digits}g}"
        if a != b:
            return a, b
    return f"{old!r}", f"{new!r}"


def _changed(old: float, new: float, scale: float) -> bool:
    return abs(new - old) > 1e-9 * max(abs(old), abs(new), scale)


def summary_line(ctx: LinkContext, edit: InertialEdit, rules: tuple[str, ...], note: str) -> str:
    """``link: rule[, rule]: name old -> new, ... (note)`` for the written numbers that change."""
    old = ctx.inertial
    head = f"{ctx.name}: {', '.join(rules)}: "
    tail = f" ({note})" if note else ""
    if old is None:
        d = np.diag(edit.inertia_frame)
        com = " ".join(f"{v:.4g}" for v in edit.com)
        return head + f"added mass {edit.mass:.4g} kg, com {com} m, ixx {d[0]:.4g} iyy {d[1]:.4g} izz {d[2]:.4g} kg m^2" + tail
    items: list[str] = []
    if _changed(old.mass, edit.mass, 0.0):
        items.append("mass %s -> %s" % _fmt_pair(old.mass, edit.mass))
    length = float(np.max(np.abs(np.concatenate([old.com, edit.com])))) if len(old.com) else 0.0
    for axis, a, b in zip("xyz", old.com, edit.com):
        if _changed(float(a), float(b), length):
            items.append(f"com {axis} " + "%s -> %s" % _fmt_pair(float(a), float(b)))
    if not np.allclose(old.rotation, edit.rotation, atol=1e-12):
        rpy = " ".join(f"{v + 0.0:.4g}" for v in mp.matrix_to_rpy(edit.rotation))
        items.append(f"rpy -> {rpy}")
    scale = max(abs(float(np.trace(old.inertia_frame))), abs(float(np.trace(edit.inertia_frame))))
    for key in TENSOR_KEYS:
        i, j = _TENSOR_INDEX[key]
        a, b = float(old.inertia_frame[i, j]), float(edit.inertia_frame[i, j])
        if _changed(a, b, scale):
            items.append(f"{key} " + "%s -> %s" % _fmt_pair(a, b))
    if not items:
        items.append("no number changes")
    if len(items) > SUMMARY_ITEMS:
        items = items[:SUMMARY_ITEMS] + [f"+{len(items) - SUMMARY_ITEMS} more"]
    return head + ", ".join(items) + tail

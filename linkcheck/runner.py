"""Files -> documents -> link contexts -> findings -> fixes. The only place that sequences the layers."""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import numpy as np

from linkcheck.checks import evaluate
from linkcheck.checks.context import LinkContext
from linkcheck.estimate import SDF_DEFAULT_DENSITY, Estimator, LinkEstimate, density_mass
from linkcheck.geometry.solid import union
from linkcheck.inertia import combine
from linkcheck.model import Document, Finding, Joint, Link, Pose
from linkcheck.settings import Settings

#: Per-link rules a fixed-joint group can clear: simulators lump the group into one body.
GROUP_RULES = frozenset({"density-implausible", "com-offset", "com-outside-geometry", "inertia-mismatch"})


@dataclass
class FileResult:
    """Everything known about one file after a check (and a fix, if asked)."""

    path: Path
    document: Document
    contexts: list[LinkContext] = field(default_factory=list)
    findings: list[Finding] = field(default_factory=list)
    new_data: bytes | None = None  # the fixed file's bytes, when a fix changed something
    fix_lines: list[str] = field(default_factory=list)  # one summary line per changed link
    refusals: list[str] = field(default_factory=list)
    estimated: bool = False  # some written value came from the uniform-density estimate
    #: contexts and findings of the file as it is on disk, kept when a fix replaced them with the fixed file's
    on_disk: tuple[list[LinkContext], list[Finding]] | None = None
    #: the settings this file was judged with (its own configuration file, command line applied)
    settings: Settings | None = None

    @property
    def changed(self) -> bool:
        return self.new_data is not None and self.new_data != self.document.data

    @property
    def fatal(self) -> bool:
        return self.document.fatal

    @property
    def fail_on(self) -> str:
        return self.settings.fail_on if self.settings is not None else "warning"

    def report_entry(self, display_path: str) -> dict[str, Any]:
        from linkcheck.report.json import file_entry

        return file_entry(self, display_path)

    def unwritten(self) -> FileResult:
        """This result as the file on disk reads when the fix is only shown (--diff): its lines, its findings."""
        if self.on_disk is None:
            return self
        return replace(self, contexts=self.on_disk[0], findings=self.on_disk[1])


def read_document(path: Path, data: bytes | None = None, search: Any = None) -> Document:
    """Read a URDF or SDFormat file by its extension, or by its root element when unclear."""
    if data is None:
        data = path.read_bytes()
    kind = _kind(path, data)
    if kind == "sdf":
        from linkcheck.formats.sdf import read_sdf

        return read_sdf(path, data, search)
    from linkcheck.formats.urdf import read_urdf

    return read_urdf(path, data)


def _kind(path: Path, data: bytes) -> str:
    suffix = path.suffix.lower()
    if suffix in (".sdf", ".world"):
        return "sdf"
    if suffix in (".urdf", ".xacro"):
        return "urdf"
    head = data[:4096]
    return "sdf" if b"<sdf" in head and b"<robot" not in head else "urdf"


def check_document(doc: Document, settings: Settings, estimator: Estimator | None = None) -> tuple[list[LinkContext], list[Finding]]:
    """Contexts and findings of one document (no selection or suppression applied yet)."""
    if doc.fatal:
        return [], list(doc.findings)
    estimator = estimator or Estimator(settings)
    findings = list(doc.findings)
    parents = {j.child: j for j in doc.joints}
    children: dict[str, list[Joint]] = {}
    for j in doc.joints:
        children.setdefault(j.parent, []).append(j)
    stated = {k.name: (k.inertial.mass_properties() if k.inertial is not None else None) for k in doc.links}
    masses = {name: (s.mass if s is not None and np.isfinite(s.mass) and s.mass > 0 else 0.0) for name, s in stated.items()}

    static = {k.name for k in doc.links if k.static}
    auto = {k.name for k in doc.links if k.inertial is not None and k.inertial.auto}
    estimates: dict[str, LinkEstimate] = {}
    autos: dict[str, AutoInertia] = {}
    for link in doc.links:
        s = None if link.name in auto else stated[link.name]
        estimates[link.name] = estimator.link(link, s.mass if s is not None else None)
        if link.name in auto:
            autos[link.name] = auto_inertia(link, estimates[link.name], settings)
            masses[link.name] = autos[link.name].mass
    subtree = _subtree_masses(doc, masses, children)

    contexts: list[LinkContext] = []
    for link in doc.links:
        est = estimates[link.name]
        s = None if link.name in auto else stated[link.name]
        ctx = LinkContext(
            path=doc.path,
            format=doc.format,
            link=link,
            settings=settings,
            inertial=None if link.name in auto else link.inertial,
            stated=s,
            estimate=est.solid,
            geometry_source=est.source,
            estimate_reason=est.reason,
            parent_joint=parents.get(link.name),
            subtree_mass=subtree[link.name],
            volumes=est.volumes,
        )
        contexts.append(ctx)
        if link.name in static:
            continue  # a static model's links are never moved: their inertia is unused
        findings.extend(est.findings)
        if link.name in auto:
            findings.extend(autos[link.name].findings)
            continue
        found = evaluate(ctx)
        found.extend(_up_axis_note(ctx, est, found))
        if s is not None and est.solid is None and s.mass > 0:
            found.append(Finding("estimate-unavailable", "info",
                                 f"link '{link.name}': {est.reason or 'no usable geometry'}: comparisons with the geometry skipped",
                                 link.name, link.line))
        findings.extend(found)
    findings = [f for f in findings if f.link not in static or f.severity == "error"]
    findings = _clear_by_groups(contexts, findings, parents)
    return contexts, findings


def _up_axis_note(ctx: LinkContext, est: LinkEstimate, found: list[Finding]) -> list[Finding]:
    """DESIGN.md trap: a stated COM that fits the mesh only once turned by its COLLADA up_axis."""
    if est.up_axis_solid is None or ctx.stated is None or ctx.diagonal <= 0:
        return []
    if not any(f.rule in ("com-offset", "com-outside-geometry") for f in found):
        return []
    gap = float(np.linalg.norm(ctx.stated.com - est.up_axis_solid.props.com))
    if gap > ctx.settings.com_offset_info * ctx.diagonal:
        return []
    return [Finding("geometry-note", "info",
                    f"link '{ctx.name}': the stated centre of mass fits the mesh turned by its COLLADA up_axis "
                    f"({est.up_axis}); ROS tools and simulators ignore up_axis, so they use the mesh as the estimate "
                    "does: the COM was probably computed in the CAD tool's axes; re-export the mesh Z-up or "
                    "recompute the block", ctx.name, ctx.line)]


@dataclass(frozen=True)
class AutoInertia:
    mass: float
    findings: list[Finding]


def auto_inertia(link: Link, est: LinkEstimate, settings: Settings) -> AutoInertia:
    """SDF <inertial auto="true">: not a missing block; check what the simulator will compute from.

    Density per collision: its <density>, else the link's <inertial><density>, else 1000 kg/m³
    (FORMATS.md §2.5). A stated <mass> rescales the result (COM unchanged).
    """
    from linkcheck.checks import words

    inertial = link.inertial
    assert inertial is not None
    name, line = link.name, inertial.line
    collisions = [b for b in link.bodies_of("collision") if b.shape is not None]
    if not collisions:
        return AutoInertia(0.0, [Finding("inertial-missing", "warning",
                                         f"link '{name}': <inertial auto=\"true\"> needs collision geometry, and the link "
                                         "has none: simulators refuse to compute its inertia", name, line)])
    out: list[Finding] = []
    default = inertial.density if inertial.density is not None else SDF_DEFAULT_DENSITY
    for rho in sorted({b.density if b.density is not None else default for b in collisions}):
        if not settings.density_min <= rho <= settings.density_max:
            out.append(Finding("density-implausible", "warning",
                               f"link '{name}': auto inertia uses a density of {words.num(rho)} kg/m³ (plausible: "
                               f"{words.num(settings.density_min)}–{words.num(settings.density_max)})", name, line))
    solid = est.solid
    if solid is None or est.source != "collision":
        return AutoInertia(0.0, out)
    mass, _ = density_mass(est.volumes, inertial.density)
    if "mass" not in inertial.missing:
        mass = inertial.mass
    props = solid.props.with_mass(mass)
    out.append(Finding("geometry-note", "info",
                       f"link '{name}': <inertial auto=\"true\">: simulators compute about {words.kg(mass)}, centre of mass "
                       f"({', '.join(words.num(v) for v in props.com)}) m, {words.tensor(props.inertia)} "
                       "from the collision geometry (uniform density per collision)", name, line))
    return AutoInertia(mass, out)


def _subtree_masses(doc: Document, masses: dict[str, float], children: dict[str, list[Joint]]) -> dict[str, float]:
    """Mass carried by each link and everything below it, in one iterative pass (cycles are cut)."""
    out: dict[str, float] = {}
    for top in doc.links:
        stack, on_path = [(top.name, False)], set()
        while stack:
            name, done = stack.pop()
            if done:
                on_path.discard(name)
                out[name] = masses.get(name, 0.0) + sum(out.get(j.child, 0.0) for j in children.get(name, [])
                                                        if j.child not in on_path)
                continue
            if name in out or name in on_path:
                continue
            on_path.add(name)
            stack.append((name, True))
            stack.extend((j.child, False) for j in children.get(name, []))
    return out


def _clear_by_groups(contexts: list[LinkContext], findings: list[Finding], parents: dict[str, Joint]) -> list[Finding]:
    """Judge links joined by fixed joints also as one rigid body; drop per-link blame the group clears."""
    by_name = {c.name: c for c in contexts}
    groups: dict[str, list[tuple[str, Pose]]] = {}
    for ctx in contexts:
        root, pose = ctx.name, Pose()
        seen = {root}
        while root in parents and not parents[root].movable and parents[root].parent in by_name and parents[root].parent not in seen:
            pose = parents[root].pose.compose(pose)
            root = parents[root].parent
            seen.add(root)
        groups.setdefault(root, []).append((ctx.name, pose))
    cleared: set[tuple[str, str]] = set()
    for root, members in groups.items():
        if len(members) < 2:
            continue
        orphans = [n for n, _ in members if _carries_mass(by_name[n]) and by_name[n].estimate is None]
        if not orphans:
            continue  # every mass has its own geometry: each link is judged on its own
        group = _group_context(by_name[root], [(by_name[n], p) for n, p in members])
        if group is None:
            continue
        still = {f.rule for f in evaluate(group)}
        cleared |= {(n, rule) for n, _ in members for rule in GROUP_RULES - still}
        cleared |= {(n, "estimate-unavailable") for n in orphans}  # judged through the group
    return [f for f in findings if (f.link, f.rule) not in cleared]


def _carries_mass(ctx: LinkContext) -> bool:
    return ctx.stated is not None and bool(np.isfinite(ctx.stated.mass)) and ctx.stated.mass > 0


def _group_context(root: LinkContext, members: list[tuple[LinkContext, Pose]]) -> LinkContext | None:
    stated = [m.stated.transformed(p.rotation, p.translation) for m, p in members
              if m.stated is not None and m.stated.mass > 0 and np.isfinite(m.stated.mass)]
    solids = [m.estimate.transformed(p) for m, p in members if m.estimate is not None]
    if not stated or not solids:
        return None
    return replace(root, stated=combine(stated), estimate=union(solids), inertial=None,
                   group=tuple(m.name for m, _ in members))


def select(findings: list[Finding], settings: Settings) -> list[Finding]:
    """Apply select/ignore, per-link ignores and severity overrides (xml-malformed always shows)."""
    from linkcheck.config import rule_enabled, severity_of

    out = []
    for f in findings:
        if f.rule != "xml-malformed" and not rule_enabled(settings, f.rule, f.link):
            continue
        severity = severity_of(settings, f.rule, f.severity)
        out.append(f if severity == f.severity else replace(f, severity=severity))  # type: ignore[arg-type]
    return out



@dataclass(frozen=True)
class RunOptions:
    """What a run does beyond checking. ``fix`` is None for a check-only run."""

    fix: Any = None  # linkcheck.fix.FixOptions
    search: Any = None  # geometry.resolve.SearchPaths
    cache: Any = None  # geometry.cache.MeshCache


def run_file(path: Path, settings: Settings, options: RunOptions = RunOptions(), data: bytes | None = None) -> FileResult:
    """Check one file and, with fix options, plan and splice the corrected blocks (nothing is written here)."""
    doc = read_document(path, data, options.search)
    estimator = Estimator(settings, options.search, options.cache)
    contexts, raw = check_document(doc, settings, estimator)
    result = FileResult(path, doc, contexts, _visible(raw, settings, doc), settings=settings)
    if options.fix is None or doc.fatal:
        return result
    _plan_and_splice(result, settings, options, estimator)
    return result


def _visible(findings: list[Finding], settings: Settings, doc: Document) -> list[Finding]:
    from linkcheck.suppress import apply_suppressions

    return apply_suppressions(select(findings, settings), doc.links, settings)


def _plan_and_splice(result: FileResult, settings: Settings, options: RunOptions, estimator: Estimator) -> None:
    from linkcheck.fix import FixPlan, plan_fix

    doc = result.document
    by_link: dict[str, list[Finding]] = {}
    for f in result.findings:
        if f.link is not None:
            by_link.setdefault(f.link, []).append(f)
    plans: dict[str, FixPlan] = {}
    for ctx in result.contexts:
        outcome = plan_fix(ctx, by_link.get(ctx.name, []), options.fix)
        if isinstance(outcome, FixPlan):
            plans[ctx.name] = outcome
        elif outcome is not None:
            result.refusals.append(f"{doc.path}:{ctx.line}: link '{outcome.link}': {outcome.rule} not fixed: {outcome.reason}")
    if not plans:
        return
    if not doc.writable:
        result.refusals.append(f"{doc.path}: not rewritten: the file is not UTF-8 or holds expressions linkcheck cannot evaluate")
        return
    new = _rewrite(doc, {name: p.edit for name, p in plans.items()})
    if new == doc.data:
        return
    again = read_document(doc.path, new, options.search)
    if again.fatal or [k.name for k in again.links] != [k.name for k in doc.links] or \
            [(j.name, j.parent, j.child) for j in again.joints] != [(j.name, j.parent, j.child) for j in doc.joints]:
        result.refusals.append(f"{doc.path}: not rewritten: the corrected file did not re-read with the same links and joints")
        return
    result.new_data = new
    result.fix_lines = [p.summary for p in plans.values()]
    result.estimated = any(p.estimated for p in plans.values())
    contexts, raw = check_document(again, settings, estimator)
    result.on_disk = (result.contexts, result.findings)
    result.contexts, result.findings = contexts, _visible(raw, settings, again)


def _rewrite(doc: Document, edits: dict[str, Any]) -> bytes:
    if doc.format == "sdf":
        from linkcheck.formats.sdf import rewrite_sdf

        return rewrite_sdf(doc, edits)
    from linkcheck.formats.urdf_write import rewrite_urdf

    return rewrite_urdf(doc, edits)

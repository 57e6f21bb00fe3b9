"""plan_fix against handbook closed forms and hand-worked parallel-axis arithmetic.

Expected values come from the handbook tables of mass moments of inertia of
homogeneous solids (REFERENCES.md, recalled from memory: box Ixx = m(b²+c²)/12,
cylinder Ixx = m(3r²+h²)/12 and Izz = mr²/2, sphere 2mr²/5), from the parallel
axis theorem worked by hand in the comments, and from scipy's Rotation for frames.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.spatial.transform import Rotation

from linkcheck import inertia as mp
from linkcheck.checks.context import LinkContext
from linkcheck.fix import FixOptions, FixPlan, Refusal, plan_fix
from linkcheck.geometry.solid import Solid, primitive_solid, union
from linkcheck.model import Body, Finding, Link, Pose, Shape, StatedInertial
from linkcheck.settings import LinkOverride, Settings

FIX = FixOptions()


def _solid(shape: Shape, pose: Pose) -> Solid:
    return primitive_solid(shape).transformed(pose)


def make_ctx(
    shapes: list[tuple[Shape, Pose]] | None,
    stated: StatedInertial | None,
    *,
    settings: Settings | None = None,
    name: str = "forearm",
    fmt: str = "urdf",
    densities: list[float | None] | None = None,
    estimate_reason: str | None = None,
) -> LinkContext:
    shapes = shapes or []
    densities = densities or [None] * len(shapes)
    bodies = [Body("collision", 5 + k, pose, shape, density=rho) for k, ((shape, pose), rho) in enumerate(zip(shapes, densities))]
    link = Link(name, 3, stated, "present" if stated is not None else "absent", bodies)
    estimate = union([_solid(s, p) for s, p in shapes]) if shapes else None
    return LinkContext(
        path=Path("robot.urdf"),
        format=fmt,
        link=link,
        settings=settings or Settings(),
        inertial=stated,
        stated=stated.mass_properties() if stated is not None else None,
        estimate=estimate,
        geometry_source="collision" if shapes else None,
        estimate_reason=estimate_reason,
        volumes=tuple((b, _solid(s, p).volume) for b, (s, p) in zip(bodies, shapes)),
    )


def block(mass: float, com=(0.0, 0.0, 0.0), tensor=None, rotation=None) -> StatedInertial:
    return StatedInertial(
        4,
        mass,
        np.array(com, dtype=float),
        np.eye(3) if rotation is None else np.asarray(rotation, dtype=float),
        np.eye(3) if tensor is None else np.asarray(tensor, dtype=float),
    )


def finding(rule: str, link: str = "forearm", **data: object) -> Finding:
    return Finding(rule, "warning", f"{rule} on {link}", link, 3, True, dict(data))


def plan(ctx: LinkContext, rules: list[Finding], options: FixOptions = FIX) -> FixPlan:
    result = plan_fix(ctx, rules, options)
    assert isinstance(result, FixPlan), result
    check_valid(result)
    return result


def box_moments(m: float, a: float, b: float, c: float) -> np.ndarray:
    """Handbook: solid cuboid, sides a, b, c: Ixx = m(b²+c²)/12, Iyy = m(a²+c²)/12, Izz = m(a²+b²)/12."""
    return np.diag([m * (b * b + c * c) / 12, m * (a * a + c * c) / 12, m * (a * a + b * b) / 12])


BOX = Shape("box", (0.4, 0.2, 0.1))
UP = Pose(translation=np.array([0.0, 0.0, 0.05]))


# --- estimate replacements: closed forms --------------------------------------------------------


def test_placeholder_takes_box_closed_form_and_keeps_mass() -> None:
    ctx = make_ctx([(BOX, UP)], block(2.0))
    p = plan(ctx, [finding("inertia-placeholder")])
    # Handbook cuboid 0.4 x 0.2 x 0.1, m = 2: Ixx = 2(0.04+0.01)/12, Iyy = 2(0.16+0.01)/12, Izz = 2(0.16+0.04)/12.
    np.testing.assert_allclose(p.new.inertia, np.diag([0.1 / 12, 0.34 / 12, 0.4 / 12]), rtol=1e-12, atol=1e-15)
    np.testing.assert_allclose(p.new.com, [0, 0, 0.05], atol=1e-15)  # centroid of a box is its centre
    assert p.new.mass == 2.0
    assert p.estimated and p.rules == ("inertia-placeholder",)
    assert p.summary.startswith("forearm: inertia-placeholder: ")
    assert "ixx 1 -> 0.008333" in p.summary and "com z 0 -> 0.05" in p.summary
    assert p.summary.endswith("(uniform-density estimate)")
    np.testing.assert_allclose(p.edit.rotation, np.eye(3))
    np.testing.assert_allclose(p.edit.inertia_frame, p.new.inertia)


def test_not_positive_definite_takes_cylinder_closed_form() -> None:
    cyl = Shape("cylinder", (0.05, 0.3))
    ctx = make_ctx([(cyl, Pose())], block(1.5, tensor=np.diag([0.01, 0.01, 0.0])))
    p = plan(ctx, [finding("inertia-not-positive-definite")])
    m, r, h = 1.5, 0.05, 0.3
    # Handbook solid cylinder, axis z: Ixx = Iyy = m(3r²+h²)/12, Izz = mr²/2.
    side = m * (3 * r * r + h * h) / 12
    np.testing.assert_allclose(np.diag(p.new.inertia), [side, side, m * r * r / 2], rtol=1e-12)


def test_triangle_inequality_takes_sphere_closed_form_and_centroid() -> None:
    sphere = Shape("sphere", (0.1,))
    pose = Pose(translation=np.array([0.02, -0.03, 0.0]))
    ctx = make_ctx([(sphere, pose)], block(0.8, com=(0.02, -0.03, 0.0), tensor=np.diag([0.001, 0.001, 0.005])))
    p = plan(ctx, [finding("inertia-triangle-inequality")])
    # Handbook solid sphere: I = 2mr²/5.
    np.testing.assert_allclose(p.new.inertia, np.eye(3) * 0.4 * 0.8 * 0.01, rtol=1e-12, atol=1e-16)
    np.testing.assert_allclose(p.new.com, [0.02, -0.03, 0.0], atol=1e-15)


def test_com_outside_geometry_replaces_com_and_tensor() -> None:
    ctx = make_ctx([(BOX, UP)], block(2.0, com=(1.0, 0.0, 0.0), tensor=box_moments(2.0, 0.4, 0.2, 0.1)))
    p = plan(ctx, [finding("com-outside-geometry")])
    np.testing.assert_allclose(p.new.com, [0, 0, 0.05], atol=1e-15)
    np.testing.assert_allclose(p.new.inertia, box_moments(2.0, 0.4, 0.2, 0.1), rtol=1e-12, atol=1e-15)
    assert "com x 1 -> 0" in p.summary


def test_two_boxes_combine_by_parallel_axis() -> None:
    # Two 0.1 m cubes centred at x = +-0.1 (unit density 1000 * 1e-3 = 1 kg each at mass 2).
    cube = Shape("box", (0.1, 0.1, 0.1))
    shapes = [(cube, Pose(translation=np.array([0.1, 0, 0]))), (cube, Pose(translation=np.array([-0.1, 0, 0])))]
    ctx = make_ctx(shapes, block(2.0))
    p = plan(ctx, [finding("inertia-placeholder")])
    # Each cube, m = 1: I = m(0.01+0.01)/12 = 1/600 on every axis; Steiner adds m d² = 0.01 to Iyy, Izz.
    cube_i = 1 / 600
    np.testing.assert_allclose(np.diag(p.new.inertia), [2 * cube_i, 2 * (cube_i + 0.01), 2 * (cube_i + 0.01)], rtol=1e-12)


# --- diagnoses that keep the user's numbers ---------------------------------------------------


def test_wrong_reference_point_shifts_users_tensor_hand_worked() -> None:
    # Box 0.2 x 0.1 x 0.1, m = 3, centred at c = (0.1, 0, 0.2). The user's own tensor about the COM is
    # diag(0.0052, 0.0121, 0.0127) (a little off the uniform box), but they wrote it about the link origin:
    #   m(|c|² E - c cᵀ), |c|² = 0.01 + 0.04 = 0.05:
    #     xx: 3(0.05 - 0.01) = 0.12   yy: 3(0.05 - 0) = 0.15   zz: 3(0.05 - 0.04) = 0.03
    #     xz: -3(0.1 * 0.2) = -0.06   xy = yz = 0
    #   stated = [[0.1252, 0, -0.06], [0, 0.1621, 0], [-0.06, 0, 0.0427]]
    # The fix must give back the user's diag(0.0052, 0.0121, 0.0127), not the box's estimate.
    shape = Shape("box", (0.2, 0.1, 0.1))
    centre = Pose(translation=np.array([0.1, 0.0, 0.2]))
    stated = np.array([[0.1252, 0, -0.06], [0, 0.1621, 0], [-0.06, 0, 0.0427]])
    ctx = make_ctx([(shape, centre)], block(3.0, com=(0.1, 0.0, 0.2), tensor=stated))
    p = plan(ctx, [finding("inertia-wrong-reference-point")])
    np.testing.assert_allclose(p.new.inertia, np.diag([0.0052, 0.0121, 0.0127]), atol=1e-12)
    np.testing.assert_allclose(p.new.com, [0.1, 0.0, 0.2])
    assert not p.estimated and p.new.mass == 3.0
    assert "ixz -0.06 -> 0" in p.summary and "parallel axis" in p.summary


def test_wrong_reference_point_falls_back_to_estimate_when_shift_is_not_physical() -> None:
    # Stated tensor smaller than m(|c|²E - ccᵀ): shifting to the COM leaves negative moments.
    shape = Shape("box", (0.2, 0.1, 0.1))
    centre = Pose(translation=np.array([0.1, 0.0, 0.2]))
    ctx = make_ctx([(shape, centre)], block(3.0, com=(0.1, 0.0, 0.2), tensor=np.diag([0.01, 0.01, 0.01])))
    p = plan(ctx, [finding("inertia-wrong-reference-point")])
    assert p.estimated
    assert "not positive definite" in p.summary
    # Handbook cuboid, m = 3, a = 0.2, b = c = 0.1: Ixx = 3(0.02)/12 = 0.005, Iyy = Izz = 3(0.05)/12 = 0.0125.
    np.testing.assert_allclose(np.diag(p.new.inertia), [0.005, 0.0125, 0.0125], rtol=1e-12)


@pytest.mark.parametrize("power", [3, -3, 6, -6, 9, -9])
def test_units_rescale_users_tensor_by_power_of_ten(power: int) -> None:
    user = box_moments(2.0, 0.4, 0.2, 0.1) * np.diag([1.05, 0.97, 1.02])  # the user's data, not the estimate
    ctx = make_ctx([(BOX, UP)], block(2.0, com=(0, 0, 0.05), tensor=user * 10.0**power))
    p = plan(ctx, [finding("inertia-units-suspect", power=power)])
    np.testing.assert_allclose(p.new.inertia, user, rtol=1e-12)
    assert not p.estimated
    assert f"rescaled by 1e{-power}" in p.summary


def test_product_sign_negates_users_products() -> None:
    # A box rotated 30° about z has products; scipy gives the rotation (extrinsic xyz = URDF rpy).
    rot = Rotation.from_euler("xyz", [0.0, 0.0, math.radians(30)]).as_matrix()
    estimate = rot @ box_moments(2.0, 0.4, 0.2, 0.1) @ rot.T
    assert abs(estimate[0, 1]) > 0.001
    cad = estimate * np.where(np.eye(3, dtype=bool), 1.0, -1.0)  # CAD +∫xy dm convention
    ctx = make_ctx([(BOX, Pose(rotation=rot))], block(2.0, tensor=cad))
    p = plan(ctx, [finding("inertia-product-sign")])
    np.testing.assert_allclose(p.new.inertia, estimate, rtol=1e-12, atol=1e-15)
    assert not p.estimated and "products negated" in p.summary


def test_units_explains_exceeds_geometry_and_keeps_users_data() -> None:
    # x1e6 also breaks trace/2 <= m R² (R = half the box diagonal): the rescaled tensor alone explains both.
    user = box_moments(2.0, 0.4, 0.2, 0.1) * 1.1
    ctx = make_ctx([(BOX, UP)], block(2.0, com=(0, 0, 0.05), tensor=user * 1e6))
    p = plan(ctx, [finding("inertia-exceeds-geometry"), finding("inertia-units-suspect", power=6)])
    assert not p.estimated
    np.testing.assert_allclose(p.new.inertia, user, rtol=1e-12)
    assert p.rules == ("inertia-exceeds-geometry", "inertia-units-suspect")


def test_keep_diagnosis_loses_to_placeholder() -> None:
    ctx = make_ctx([(BOX, UP)], block(2.0, com=(0, 0, 0.05)))
    p = plan(ctx, [finding("inertia-units-suspect", power=3), finding("inertia-placeholder")])
    assert p.estimated
    np.testing.assert_allclose(p.new.inertia, box_moments(2.0, 0.4, 0.2, 0.1), rtol=1e-12)


def test_recompute_prefers_estimate_when_rescaled_tensor_is_still_far() -> None:
    user = box_moments(2.0, 0.4, 0.2, 0.1)[[2, 1, 0]][:, [2, 1, 0]]  # axes swapped, then x1000
    ctx = make_ctx([(BOX, UP)], block(2.0, com=(0, 0, 0.05), tensor=user * 1e3))
    kept = plan(ctx, [finding("inertia-units-suspect", power=3)])
    np.testing.assert_allclose(kept.new.inertia, user, rtol=1e-12)
    redone = plan(ctx, [finding("inertia-units-suspect", power=3)], FixOptions(recompute=True))
    assert redone.estimated
    np.testing.assert_allclose(redone.new.inertia, box_moments(2.0, 0.4, 0.2, 0.1), rtol=1e-12)


# --- flags: recompute and fill-missing ----------------------------------------------------------


def test_mismatch_and_com_offset_only_with_recompute() -> None:
    ctx = make_ctx([(BOX, UP)], block(2.0, com=(0.1, 0, 0.05), tensor=box_moments(2.0, 0.4, 0.2, 0.1) * 4))
    rules = [finding("inertia-mismatch"), finding("com-offset")]
    assert plan_fix(ctx, rules, FIX) is None
    p = plan(ctx, rules, FixOptions(recompute=True))
    np.testing.assert_allclose(p.new.com, [0, 0, 0.05], atol=1e-15)
    np.testing.assert_allclose(p.new.inertia, box_moments(2.0, 0.4, 0.2, 0.1), rtol=1e-12)
    assert p.rules == ("com-offset", "inertia-mismatch")


V_BOX = 0.4 * 0.2 * 0.1  # m³, cuboid volume abc


@pytest.mark.parametrize(
    ("overrides", "cli", "default", "sdf", "mass", "origin"),
    [
        ((LinkOverride("fore*", mass=2.5), LinkOverride("fore*", density=2700.0)), 1000.0, 500.0, 7800.0, 2.5, "per-link mass"),
        ((LinkOverride("other", mass=9.0), LinkOverride("fore*", density=2700.0)), 1000.0, 500.0, 7800.0, 2700 * V_BOX, "per-link density"),
        ((LinkOverride("other", density=1.0),), 1000.0, 500.0, 7800.0, 1000 * V_BOX, "--density"),
        ((), None, 500.0, 7800.0, 500 * V_BOX, "default density"),
        ((), None, None, 7800.0, 7800 * V_BOX, "SDF collision density"),
    ],
)
def test_fill_missing_mass_precedence(overrides, cli, default, sdf, mass, origin) -> None:
    settings = Settings(links=overrides, default_density=default)
    ctx = make_ctx([(BOX, UP)], None, settings=settings, densities=[sdf], fmt="sdf")
    p = plan(ctx, [finding("inertial-missing")], FixOptions(fill_missing=True, density=cli))
    assert p.new.mass == pytest.approx(mass, rel=1e-12)
    np.testing.assert_allclose(p.new.inertia, box_moments(mass, 0.4, 0.2, 0.1), rtol=1e-12)
    assert origin in p.summary and "added mass" in p.summary and p.estimated


def test_fill_sdf_mixed_densities_sum_per_body() -> None:
    cube = Shape("box", (0.1, 0.1, 0.1))
    shapes = [(cube, Pose(translation=np.array([0.1, 0, 0]))), (cube, Pose(translation=np.array([-0.1, 0, 0])))]
    ctx = make_ctx(shapes, None, densities=[1000.0, 3000.0], fmt="sdf")
    p = plan(ctx, [finding("inertial-missing")], FixOptions(fill_missing=True))
    assert p.new.mass == pytest.approx(1000 * 1e-3 + 3000 * 1e-3, rel=1e-12)  # Σ ρ_i V_i, cube V = 0.001 m³


def test_fill_missing_without_mass_source_refuses_naming_options() -> None:
    ctx = make_ctx([(BOX, UP)], None)
    r = plan_fix(ctx, [finding("inertial-missing")], FixOptions(fill_missing=True))
    assert isinstance(r, Refusal) and r.rule == "inertial-missing" and r.link == "forearm"
    assert "link 'forearm'" in r.reason and "--density KG_M3" in r.reason and "[[tool.linkcheck.links]]" in r.reason
    assert plan_fix(ctx, [finding("inertial-missing")], FIX) is None  # not without --fill-missing


def test_massless_moving_link_filled_from_density() -> None:
    ctx = make_ctx([(Shape("cylinder", (0.05, 0.3)), Pose())], block(0.0, tensor=np.zeros((3, 3))))
    p = plan(ctx, [finding("massless-moving-link")], FixOptions(fill_missing=True, density=1000.0))
    m = 1000 * math.pi * 0.05**2 * 0.3  # ρ π r² h
    assert p.new.mass == pytest.approx(m, rel=1e-12)
    assert p.new.inertia[2, 2] == pytest.approx(m * 0.05**2 / 2, rel=1e-12)  # handbook cylinder Izz = mr²/2


def test_mass_not_positive_with_density_and_without() -> None:
    ctx = make_ctx([(BOX, UP)], block(-1.0, com=(0, 0, 0.05), tensor=box_moments(2.0, 0.4, 0.2, 0.1)))
    rules = [Finding("mass-not-positive", "error", "mass", "forearm", 3, True, {"needs": "density"})]
    p = plan(ctx, rules, FixOptions(density=2700.0))
    assert p.new.mass == pytest.approx(2700 * V_BOX, rel=1e-12)
    np.testing.assert_allclose(p.new.inertia, box_moments(2700 * V_BOX, 0.4, 0.2, 0.1), rtol=1e-12)
    assert "mass -1 -> 21.6" in p.summary
    r = plan_fix(ctx, rules, FIX)
    assert isinstance(r, Refusal) and "density" in r.reason


# --- refusals ------------------------------------------------------------------------------


@pytest.mark.parametrize("rule", ["value-malformed", "mesh-unavailable"])
def test_never_fixable_rules_refuse_with_why(rule: str) -> None:
    ctx = make_ctx([(BOX, UP)], block(2.0))
    r = plan_fix(ctx, [finding(rule), finding("inertia-placeholder")], FixOptions(recompute=True, fill_missing=True))
    assert isinstance(r, Refusal) and r.reason
    alone = plan_fix(ctx, [finding(rule)], FIX)
    assert isinstance(alone, Refusal) and alone.rule == rule


def test_estimate_needed_but_unavailable_refuses_with_reason() -> None:
    ctx = make_ctx(None, block(2.0), estimate_reason="only a plane, which has no volume")
    r = plan_fix(ctx, [finding("estimate-unavailable"), finding("inertia-placeholder")], FIX)
    assert isinstance(r, Refusal) and r.rule == "inertia-placeholder"
    assert "only a plane" in r.reason
    assert plan_fix(ctx, [finding("estimate-unavailable")], FIX) is None  # nothing was asked of the fix


def test_findings_of_other_links_and_report_only_rules_are_ignored() -> None:
    ctx = make_ctx([(BOX, UP)], block(2.0))
    assert plan_fix(ctx, [finding("inertia-placeholder", link="elbow"), finding("density-implausible")], FIX) is None
    assert plan_fix(ctx, [finding("inertia-placeholder")], FixOptions(fix=False)) is None


def test_units_without_power_falls_back_to_estimate() -> None:
    ctx = make_ctx([(BOX, UP)], block(2.0, com=(0, 0, 0.05), tensor=box_moments(2.0, 0.4, 0.2, 0.1) * 1e3))
    p = plan(ctx, [finding("inertia-units-suspect")])
    assert p.estimated and "no power of ten" in p.summary


def test_group_context_and_auto_block_refuse() -> None:
    from dataclasses import replace

    ctx = make_ctx([(BOX, UP)], block(2.0))
    grouped = plan_fix(replace(ctx, group=("forearm", "camera_mount")), [finding("inertia-placeholder")], FIX)
    assert isinstance(grouped, Refusal) and "camera_mount" in grouped.reason
    auto = replace(block(2.0), auto=True)
    r = plan_fix(make_ctx([(BOX, UP)], auto), [finding("inertia-placeholder")], FIX)
    assert isinstance(r, Refusal) and 'auto="true"' in r.reason


def test_massless_moving_link_without_geometry_refuses_with_options() -> None:
    ctx = make_ctx(None, block(0.0, tensor=np.zeros((3, 3))), name="tool_flange")
    r = plan_fix(ctx, [finding("massless-moving-link", link="tool_flange")], FixOptions(fill_missing=True, density=1000.0))
    assert isinstance(r, Refusal) and "no geometry" in r.reason and "make the joint fixed" in r.reason


def test_incomplete_sdf_block_without_mass_takes_mass_source() -> None:
    stated = replace_missing(block(1.0, tensor=np.diag([0.01, 1.0, 1.0])), ("mass", "iyy", "izz"))
    ctx = make_ctx([(BOX, UP)], stated, fmt="sdf", settings=Settings(default_density=500.0))
    p = plan(ctx, [finding("inertial-incomplete")])
    assert p.new.mass == pytest.approx(500 * V_BOX, rel=1e-12)  # ρ abc
    kept = plan(make_ctx([(BOX, UP)], stated, fmt="sdf"), [finding("inertial-incomplete")])
    assert kept.new.mass == 1.0  # no source: the mass simulators use stays


def replace_missing(stated: StatedInertial, missing: tuple[str, ...]) -> StatedInertial:
    from dataclasses import replace

    return replace(stated, missing=missing)


@pytest.mark.parametrize(
    ("shape", "moments"),
    [
        # Handbook solid cylinder, m = 1: Ixx = Iyy = (3r² + h²)/12, Izz = r²/2; I1 + I2 - I3 = h²/6.
        (Shape("cylinder", (0.1, 1e-4)), (3 * 0.01 + 1e-8) / 12),  # thin disc: I1 + I2 = I3 + h²/6
        (Shape("cylinder", (0.002, 1.0)), (3 * 4e-6 + 1.0) / 12),  # thin rod: Izz/trace ~ 1e-5
    ],
)
def test_thin_bodies_survive_formatting_and_rereading(shape: Shape, moments: float) -> None:
    from linkcheck.formats.numbers import format_edit, tensor_of

    ctx = make_ctx([(shape, Pose())], block(1.0, tensor=np.diag([1.0, 1.0, 0.0])))
    p = plan(ctx, [finding("inertia-not-positive-definite")])
    assert p.new.inertia[0, 0] == pytest.approx(moments, rel=1e-12)
    texts = format_edit(p.edit)
    back = tensor_of({k: float(texts[k]) for k in ("ixx", "ixy", "ixz", "iyy", "iyz", "izz")})
    assert mp.is_positive_definite(back) and mp.satisfies_triangle(back)


# --- frames ------------------------------------------------------------------------------


def test_keep_frame_round_trip_with_scipy_rotation() -> None:
    rpy = [0.3, -0.5, 1.1]
    rot = Rotation.from_euler("xyz", rpy).as_matrix()  # URDF rpy: fixed axes x, y, z
    ctx = make_ctx([(BOX, UP)], block(2.0, rotation=rot))
    kept = plan(ctx, [finding("inertia-placeholder")], FixOptions(keep_frame=True))
    np.testing.assert_allclose(kept.edit.rotation, rot, atol=1e-15)
    # Written tensor is Rᵀ I R; the reader maps it back with R I Rᵀ and must get the link-frame tensor.
    np.testing.assert_allclose(kept.edit.inertia_frame, rot.T @ kept.new.inertia @ rot, atol=1e-15)
    back = Rotation.from_euler("xyz", rpy).as_matrix() @ kept.edit.inertia_frame @ rot.T
    np.testing.assert_allclose(back, box_moments(2.0, 0.4, 0.2, 0.1), atol=1e-14)
    assert "rpy" not in kept.summary
    flat = plan(ctx, [finding("inertia-placeholder")])
    np.testing.assert_allclose(flat.edit.rotation, np.eye(3))
    np.testing.assert_allclose(flat.edit.inertia_frame, box_moments(2.0, 0.4, 0.2, 0.1), atol=1e-15)
    assert "rpy -> 0 0 0" in flat.summary


def test_idempotent_under_the_rules() -> None:
    """A second run on the fixed block finds nothing the fix acts on (rules from linkcheck.checks)."""
    from linkcheck.checks import evaluate

    options = FixOptions(recompute=True)
    ctx = make_ctx([(BOX, UP)], block(2.0))
    first = plan_fix(ctx, evaluate(ctx), options)
    assert isinstance(first, FixPlan)
    e = first.edit
    fixed = make_ctx([(BOX, UP)], StatedInertial(4, e.mass, e.com, e.rotation, e.inertia_frame))
    assert plan_fix(fixed, evaluate(fixed), options) is None


@settings(max_examples=150, deadline=None)
@given(
    sides=st.tuples(*[st.floats(0.005, 1.0)] * 3),
    angles=st.tuples(*[st.floats(-math.pi, math.pi)] * 3),
    mass=st.floats(0.01, 50.0),
    moments=st.tuples(*[st.floats(-1.0, 1.0)] * 3),
    rules=st.lists(st.sampled_from(
        ["inertia-placeholder", "inertia-not-positive-definite", "inertia-triangle-inequality",
         "inertia-exceeds-geometry", "com-outside-geometry", "inertia-wrong-reference-point",
         "inertia-product-sign", "inertia-units-suspect", "com-offset", "inertia-mismatch"]), min_size=1, max_size=4),
    recompute=st.booleans(),
    keep_frame=st.booleans(),
)
def test_any_plan_is_a_valid_rigid_body(sides, angles, mass, moments, rules, recompute, keep_frame) -> None:
    """Whatever the stated numbers and findings, a plan passes the validity tests of linkcheck.inertia."""
    rot = Rotation.from_euler("xyz", angles).as_matrix()
    shape = Shape("box", sides)
    stated = block(mass, com=(0.3, -0.2, 0.1), tensor=np.diag(moments), rotation=rot)
    ctx = make_ctx([(shape, Pose(rotation=rot, translation=np.array([0.1, 0.0, 0.0])))], stated)
    found = [finding(r, power=3) for r in rules]
    result = plan_fix(ctx, found, FixOptions(recompute=recompute, keep_frame=keep_frame))
    gated = {"com-offset", "inertia-mismatch"}
    assert (result is None) == (not recompute and set(rules) <= gated)
    if isinstance(result, FixPlan):
        check_valid(result)


def check_valid(p: FixPlan) -> None:
    assert p.new.mass > 0
    assert mp.is_positive_definite(p.new.inertia), p.summary
    assert mp.satisfies_triangle(p.new.inertia), p.summary
    link_frame = mp.rotate_tensor(p.edit.inertia_frame, p.edit.rotation)
    np.testing.assert_allclose(link_frame, p.new.inertia, atol=1e-12 * np.trace(p.new.inertia))
    np.testing.assert_allclose(p.edit.com, p.new.com)

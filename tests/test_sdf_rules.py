"""SDF-only judgement in the runner: auto inertia, static models, defaulted tensors.

Expected values: FORMATS.md §2.4-2.5 (libsdformat behaviour: density precedence collision >
inertial > 1000 kg/m³, auto needs collisions, static models unused) and box volume = abc.
"""

from __future__ import annotations

from pathlib import Path

from linkcheck.formats.sdf import read_sdf
from linkcheck.runner import check_document
from linkcheck.settings import Settings


def findings(body: str) -> list:
    data = f'<?xml version="1.0"?>\n<sdf version="1.11"><model name="m">{body}</model></sdf>\n'.encode()
    _, found = check_document(read_sdf(Path("m.sdf"), data), Settings())
    return found


def test_auto_inertia_reports_what_the_simulator_computes():
    found = findings('<link name="tray"><inertial auto="true"><density>600</density></inertial>'
                     '<collision name="c"><geometry><box><size>1.2 0.6 0.3</size></box></geometry></collision></link>')
    # 600 kg/m³ x 1.2 x 0.6 x 0.3 m³ = 129.6 kg; nothing stated is judged
    assert [f.rule for f in found] == ["geometry-note"]
    assert "130 kg" in found[0].message


def test_auto_inertia_without_collision_and_with_implausible_density():
    none = findings('<link name="a"><inertial auto="true"/><visual name="v"><geometry><sphere><radius>0.1</radius>'
                    '</sphere></geometry></visual></link>')
    assert [f.rule for f in none] == ["inertial-missing"]
    light = findings('<link name="a"><inertial auto="true"><density>5</density></inertial><collision name="c">'
                     '<geometry><sphere><radius>0.1</radius></sphere></geometry></collision></link>')
    assert "density-implausible" in {f.rule for f in light}


def test_static_model_links_are_not_judged():
    assert findings('<static>true</static><link name="ground"><collision name="c"><geometry><box><size>1 1 1</size>'
                    '</box></geometry></collision></link>') == []


def test_defaulted_moments_are_reported_once():
    found = findings('<link name="a"><inertial><mass>0.5</mass><inertia><ixx>0.001</ixx></inertia></inertial>'
                     '<collision name="c"><geometry><box><size>0.1 0.1 0.1</size></box></geometry></collision></link>')
    rules = {f.rule for f in found}
    # iyy = izz = 1 kg m² fill in silently: incomplete, not a cascade of tensor errors
    assert "inertial-incomplete" in rules
    assert not rules & {"inertia-triangle-inequality", "inertia-exceeds-geometry", "inertia-mismatch"}


def test_auto_inertia_with_mixed_densities_sums_per_collision():
    # FORMATS.md §2.5: each collision's own <density>; 0.1 m cubes (1e-3 m³ each) at 1000 and 3000 kg/m³
    cube = '<geometry><box><size>0.1 0.1 0.1</size></box></geometry>'
    found = findings(f'<link name="a"><inertial auto="true"/>'
                     f'<collision name="c1"><pose>0.1 0 0 0 0 0</pose><density>1000</density>{cube}</collision>'
                     f'<collision name="c2"><pose>-0.1 0 0 0 0 0</pose><density>3000</density>{cube}</collision></link>')
    (note,) = [f for f in found if f.rule == "geometry-note"]
    assert "about 4 kg" in note.message  # 1 kg + 3 kg

"""The mesh result cache: hits, misses, corrupt entries, concurrent writers.

The outside reference for the numbers is trimesh's mass properties of the same file; the
cache must give bit-identical results to a fresh computation (JSON floats round-trip by repr).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest
import trimesh

from linkcheck import reads
from linkcheck.geometry.cache import MeshCache, content_digest, default_directory
from linkcheck.geometry.mesh import mesh_estimate
from linkcheck.geometry.resolve import SearchPaths

NO_ENV = SearchPaths(env={})


def write_stl(path: Path, mesh: trimesh.Trimesh) -> Path:
    path.write_bytes(trimesh.exchange.stl.export_stl(mesh))
    return path


def run(path: Path, cache: MeshCache | None, scale=(1.0, 1.0, 1.0)):
    return mesh_estimate(path.name, path.parent, scale, NO_ENV, cache)


def entries(cache: MeshCache) -> list[Path]:
    return sorted(p for p in cache.directory.rglob("*.json") if "meshes" in p.parent.parent.name)


@pytest.fixture
def old_mtime(monkeypatch: pytest.MonkeyPatch) -> None:
    """Files written by a test are brand new; let the stat index trust them anyway."""
    monkeypatch.setattr(reads, "RACY_SECONDS", -1e9)


def test_hit_gives_identical_numbers(tmp_path: Path) -> None:
    path = write_stl(tmp_path / "s.stl", trimesh.creation.icosphere(subdivisions=2, radius=0.3))
    cache = MeshCache(tmp_path / "cache")
    cold = run(path, cache)
    warm = run(path, cache)
    assert not cold.cached and warm.cached
    assert warm.solid.volume == cold.solid.volume
    assert np.array_equal(warm.solid.props.inertia, cold.solid.props.inertia)
    assert np.array_equal(warm.solid.points, cold.solid.points)
    ref = trimesh.load_mesh(path, process=False)  # trimesh on the same file
    assert warm.solid.volume == pytest.approx(ref.volume, rel=1e-9)


def test_findings_survive_the_cache(tmp_path: Path) -> None:
    cube = trimesh.creation.box((1, 1, 1))
    cube.invert()
    path = write_stl(tmp_path / "inv.stl", cube)
    cache = MeshCache(tmp_path / "cache")
    cold, warm = run(path, cache), run(path, cache)
    assert warm.cached
    assert [f.rule for f in warm.findings] == [f.rule for f in cold.findings] == ["mesh-inside-out"]
    assert warm.findings[0].message == cold.findings[0].message


def test_scale_is_part_of_the_key(tmp_path: Path) -> None:
    path = write_stl(tmp_path / "b.stl", trimesh.creation.box((1, 1, 1)))
    cache = MeshCache(tmp_path / "cache")
    run(path, cache)
    scaled = run(path, cache, (0.5, 0.5, 0.5))
    assert not scaled.cached and scaled.solid.volume == pytest.approx(0.125)


def test_miss_after_content_change(tmp_path: Path, old_mtime: None) -> None:
    path = write_stl(tmp_path / "b.stl", trimesh.creation.box((1, 1, 1)))
    cache = MeshCache(tmp_path / "cache")
    run(path, cache)
    assert run(path, cache).cached
    st = os.stat(path)
    write_stl(path, trimesh.creation.box((1, 1, 2)))
    os.utime(path, ns=(st.st_atime_ns, st.st_mtime_ns))  # same mtime: size and ctime still differ
    changed = run(path, cache)
    assert not changed.cached and changed.solid.volume == pytest.approx(2.0)


def test_same_size_change_within_the_racy_window_is_rehashed(tmp_path: Path) -> None:
    path = write_stl(tmp_path / "b.stl", trimesh.creation.box((1, 1, 1)))
    cache = MeshCache(tmp_path / "cache")
    run(path, cache)
    write_stl(path, trimesh.creation.box((1, 1, 3)))  # same triangle count, so the same size
    assert run(path, cache).solid.volume == pytest.approx(3.0)


def test_stat_index_skips_reading(tmp_path: Path, old_mtime: None, monkeypatch: pytest.MonkeyPatch) -> None:
    path = write_stl(tmp_path / "b.stl", trimesh.creation.box((1, 1, 1)))
    cache = MeshCache(tmp_path / "cache")
    run(path, cache)
    digest, data = cache.digest(path)
    assert data is None and digest == content_digest(path.read_bytes())


def test_corrupt_entry_is_ignored_and_rebuilt(tmp_path: Path) -> None:
    path = write_stl(tmp_path / "b.stl", trimesh.creation.box((1, 2, 3)))
    cache = MeshCache(tmp_path / "cache")
    run(path, cache)
    (entry,) = entries(cache)
    good = json.loads(entry.read_bytes())
    damaged = [{"version": 1, "key": entry.stem, "solid": {"volume": 1}}, {**good, "findings": "oops"},
               {**good, "findings": [["mesh-inside-out", "bogus", "x", {}]]}, {**good, "triangles": 1e309}]
    for garbage in (b"{not json", b"", *(json.dumps(d).replace("1e+309", "Infinity").encode() for d in damaged)):
        entry.write_bytes(garbage)
        again = run(path, cache)
        assert not again.cached and again.solid.volume == pytest.approx(6.0)  # box 1 x 2 x 3 m: V = 6 m^3
        assert run(path, cache).cached  # rewritten whole


def test_stale_version_is_ignored(tmp_path: Path) -> None:
    path = write_stl(tmp_path / "b.stl", trimesh.creation.box((1, 2, 3)))
    cache = MeshCache(tmp_path / "cache")
    run(path, cache)
    (entry,) = entries(cache)
    payload = json.loads(entry.read_bytes())
    payload["version"] = 0
    entry.write_text(json.dumps(payload))
    assert not run(path, cache).cached


def test_unwritable_cache_is_silent(tmp_path: Path) -> None:
    blocker = tmp_path / "file"
    blocker.write_text("not a folder")
    path = write_stl(tmp_path / "b.stl", trimesh.creation.box((1, 1, 1)))
    est = run(path, MeshCache(blocker / "cache"))
    assert est.trusted and est.solid.volume == pytest.approx(1.0)


def test_two_processes_writing_at_once(tmp_path: Path) -> None:
    mesh = trimesh.creation.torus(major_radius=0.2, minor_radius=0.05, major_sections=64, minor_sections=32)
    paths = [write_stl(tmp_path / f"m{i}.stl", mesh.copy().apply_scale(1 + i / 10)) for i in range(6)]
    code = textwrap.dedent(f"""
        import sys
        from pathlib import Path
        from linkcheck.geometry.cache import MeshCache
        from linkcheck.geometry.mesh import mesh_estimate
        cache = MeshCache(Path({str(tmp_path / 'cache')!r}))
        for _ in range(5):
            for p in {[str(p) for p in paths]!r}:
                p = Path(p)
                est = mesh_estimate(p.name, p.parent, (1, 1, 1), None, cache)
                assert est.trusted and est.solid is not None, est
                print(repr(est.solid.volume))
        """)
    procs = [subprocess.Popen([sys.executable, "-c", code], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True) for _ in range(2)]
    outs = [p.communicate(timeout=300) for p in procs]
    for proc, (out, err) in zip(procs, outs):
        assert proc.returncode == 0, err
    assert outs[0][0] == outs[1][0]
    cache = MeshCache(tmp_path / "cache")
    assert len(entries(cache)) == len(paths)
    assert not list((tmp_path / "cache").rglob(".tmp-*"))  # no half-written leftovers
    for p in entries(cache):
        json.loads(p.read_bytes())
    for path, line in zip(paths, outs[0][0].split()[: len(paths)]):
        assert float(line) == pytest.approx(trimesh.load_mesh(path, process=False).volume, rel=1e-9)


def test_default_directory_follows_xdg() -> None:
    # XDG Base Directory spec: $XDG_CACHE_HOME, else ~/.cache
    assert default_directory({"XDG_CACHE_HOME": "/x/cache"}) == Path("/x/cache/linkcheck")
    assert default_directory({}) == Path(os.path.expanduser("~")) / ".cache" / "linkcheck"
    assert default_directory({"LINKCHECK_CACHE_DIR": "/y"}) == Path("/y")


def test_prune_deletes_only_old_cache_files_and_at_most_daily(tmp_path: Path) -> None:
    from linkcheck.geometry.cache import PRUNE_AFTER_DAYS, prune

    now = 2_000_000_000.0
    old, fresh = now - (PRUNE_AFTER_DAYS + 1) * 86400, now - 86400
    files = {}
    for rel, when in (("meshes-v1/ab/old.json", old), ("results-v1/cd/new.json", fresh), ("stat-v0/x.json", old),
                      ("notes/keep.txt", old)):  # not one of linkcheck's *-vN folders: never touched
        path = tmp_path / rel
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text("{}")
        os.utime(path, (when, when))
        files[rel] = path
    assert prune(tmp_path, now) == 2
    assert [rel for rel, p in files.items() if p.exists()] == ["results-v1/cd/new.json", "notes/keep.txt"]
    os.utime(files["results-v1/cd/new.json"], (old, old))
    assert prune(tmp_path, now + 3600) == 0  # pruned an hour ago: not walked again
    assert prune(tmp_path, now + 2 * 86400) == 1


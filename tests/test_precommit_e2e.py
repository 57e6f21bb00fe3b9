"""End to end through real git and real pre-commit, with this checkout's hook manifest.

The hooks are our .pre-commit-hooks.yaml entries as ``repo: local`` hooks (same files
regex, types, require_serial) whose entry is this interpreter's ``-m linkcheck``, so no
network or hook environment is needed. Expected inertias are the handbook box formula
Ixx = m(b^2 + c^2)/12 (table of moments of inertia of homogeneous solids, from memory),
test meshes come from trimesh.creation.box, and the pass/fail/modified semantics are
pre-commit's (LIBRARIES.md §5.2: a hook that changes files fails even when it exits 0).
"""

from __future__ import annotations

import os
import shlex
import subprocess
import sys
from importlib.metadata import version
from pathlib import Path

import pytest
import yaml

ROOT = Path(__file__).resolve().parents[1]


def box_inertia(m: float, a: float, b: float, c: float) -> tuple[float, float, float]:
    """Handbook: solid cuboid with full sides a, b, c about its centroid."""
    return m * (b * b + c * c) / 12, m * (a * a + c * c) / 12, m * (a * a + b * b) / 12


def one_link_urdf(robot: str, link: str, mass: str, inertia: tuple[float, float, float], geometry: str,
                  header: str = "", origin: str = "") -> str:
    """One link with a diagonal stated tensor and one collision geometry (invented models)."""
    ixx, iyy, izz = inertia
    return f"""<?xml version="1.0"?>
{header}<robot name="{robot}">
  <link name="{link}">
    <inertial>
      <mass value="{mass}"/>
{origin}      <inertia ixx="{ixx:.9g}" ixy="0" ixz="0" iyy="{iyy:.9g}" iyz="0" izz="{izz:.9g}"/>
    </inertial>
    <collision>
      <geometry>{geometry}</geometry>
    </collision>
  </link>
</robot>
"""


def box_urdf(name: str, inertia: tuple[float, float, float], mass: float = 2.0) -> str:
    return one_link_urdf(name, "base", str(mass), inertia, '<box size="0.1 0.2 0.3"/>',
                         header="<!-- demo cart of our own invention -->\n",
                         origin='      <origin xyz="0 0 0" rpy="0 0 0"/>\n')


def mesh_urdf() -> str:
    # handbook cube of side 0.1 m, 1 kg; the STL written by stl_cube is trimesh.creation.box
    return one_link_urdf("gripper", "finger", "1.0", box_inertia(1.0, 0.1, 0.1, 0.1),
                         '<mesh filename="meshes/finger.stl"/>')


def stl_cube(path: Path, side: float) -> None:
    import trimesh

    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_bytes(trimesh.creation.box(extents=(side, side, side)).export(file_type="stl"))


def hooks_config(python: str) -> str:
    """Our manifest's hooks as local hooks running this checkout; the fixer only on demand."""
    manifest = yaml.safe_load((ROOT / ".pre-commit-hooks.yaml").read_text())
    language = "unsupported" if tuple(int(x) for x in version("pre-commit").split(".")[:2]) >= (4, 4) else "system"
    hooks = []
    for hook in manifest:
        local = dict(hook)
        args = shlex.split(hook["entry"])
        assert args[0] == "linkcheck"
        local["entry"] = " ".join([shlex.quote(python), "-m", "linkcheck", *args[1:]])
        local["language"] = language
        if hook["id"] == "linkcheck-fix":
            local["stages"] = ["manual"]
        hooks.append(local)
    return yaml.safe_dump({"repos": [{"repo": "local", "hooks": hooks}]}, sort_keys=False)


class Repo:
    def __init__(self, root: Path, home: Path):
        self.root = root
        gitconfig = home / "gitconfig"
        gitconfig.write_text("[user]\n\tname = Test Robotics\n\temail = test@example.invalid\n"
                             "[init]\n\tdefaultBranch = main\n[commit]\n\tgpgsign = false\n")
        self.env = {k: v for k, v in os.environ.items() if not k.startswith(("GIT_", "PRE_COMMIT"))}
        self.env.update(GIT_CONFIG_GLOBAL=str(gitconfig), GIT_CONFIG_NOSYSTEM="1",
                        PRE_COMMIT_HOME=str(home / "pre-commit"), PRE_COMMIT_COLOR="never",
                        VIRTUALENV_OVERRIDE_APP_DATA=str(home / "venv-data"), NO_COLOR="1", COLUMNS="200")

    def run(self, *args: str) -> subprocess.CompletedProcess[str]:
        return subprocess.run(args, cwd=self.root, env=self.env, capture_output=True, text=True, timeout=300)

    def pre_commit(self, *args: str) -> subprocess.CompletedProcess[str]:
        return self.run(sys.executable, "-m", "pre_commit", *args)

    def commit(self, message: str) -> subprocess.CompletedProcess[str]:
        return self.run("git", "commit", "-m", message)

    def head(self) -> str | None:
        r = self.run("git", "rev-parse", "--verify", "-q", "HEAD")
        return r.stdout.strip() or None


def output(r: subprocess.CompletedProcess[str]) -> str:
    return r.stdout + r.stderr


def finding_lines(text: str, path: str) -> list[str]:
    """Lines of the CLI contract ``path:line  link  severity  rule  message`` for ``path``."""
    return [ln.strip() for ln in text.splitlines() if ln.strip().startswith(f"{path}:")]


@pytest.mark.slow
def test_hooks_through_real_git_and_pre_commit(tmp_path: Path) -> None:
    home = tmp_path / "home"
    home.mkdir()
    repo = Repo(tmp_path / "robot", home)
    repo.root.mkdir()
    assert repo.run("git", "init", "-q").returncode == 0
    good = box_inertia(2.0, 0.1, 0.2, 0.3)
    (repo.root / "good.urdf").write_text(box_urdf("good_cart", good))
    (repo.root / "bad.urdf").write_text(box_urdf("bad_cart", (1.0, 1.0, 3.0)))  # 1 + 1 < 3: no body has it
    (repo.root / "gripper.urdf").write_text(mesh_urdf())
    stl_cube(repo.root / "meshes/finger.stl", 0.1)
    (repo.root / ".pre-commit-config.yaml").write_text(hooks_config(sys.executable))
    install = repo.pre_commit("install")
    assert install.returncode == 0, output(install)
    repo.run("git", "add", "-A")  # --all-files means the files git knows

    # check hook over everything: the bad file fails with our rule, the good ones report nothing
    r = repo.pre_commit("run", "linkcheck", "--all-files")
    text = output(r)
    assert r.returncode == 1, text
    bad_lines = finding_lines(text, "bad.urdf")
    assert any("inertia-triangle-inequality" in ln and "base" in ln for ln in bad_lines), text
    assert not [ln for ln in finding_lines(text, "good.urdf") if " warning " in ln or " error " in ln], text
    r = repo.pre_commit("run", "linkcheck", "--files", "good.urdf", "gripper.urdf", "meshes/finger.stl")
    assert r.returncode == 0, output(r)

    # a real commit with the bad file is refused by the installed hook
    r = repo.commit("add robots")
    assert r.returncode != 0 and repo.head() is None, output(r)
    assert "inertia-triangle-inequality" in output(r)

    # the fix hook repairs the file: fails once (files modified), then passes
    before = (repo.root / "bad.urdf").read_text()
    r = repo.pre_commit("run", "linkcheck-fix", "--hook-stage", "manual", "--files", "bad.urdf")
    assert r.returncode == 1 and "files were modified by this hook" in output(r), output(r)
    after = (repo.root / "bad.urdf").read_text()
    changed = [(a, b) for a, b in zip(before.splitlines(), after.splitlines()) if a != b]
    assert len(before.splitlines()) == len(after.splitlines()) and len(changed) == 1, changed
    assert "<inertia " in changed[0][1]
    repo.run("git", "add", "bad.urdf")
    r = repo.pre_commit("run", "linkcheck-fix", "--hook-stage", "manual", "--files", "bad.urdf")
    assert r.returncode == 0, output(r)
    r = repo.commit("add robots")
    assert r.returncode == 0 and repo.head() is not None, output(r)

    # a mesh nobody uses is ignored silently
    stl_cube(repo.root / "meshes/spare.stl", 0.05)
    repo.run("git", "add", "meshes/spare.stl")
    r = repo.commit("spare mesh")
    assert r.returncode == 0, output(r)
    first = repo.head()

    # changing only the mesh re-checks the description that uses it: 27x the volume, same stated block
    stl_cube(repo.root / "meshes/finger.stl", 0.3)
    repo.run("git", "add", "meshes/finger.stl")
    r = repo.commit("bigger finger")
    text = output(r)
    assert r.returncode != 0 and repo.head() == first, text
    lines = finding_lines(text, "gripper.urdf")
    assert any(rule in ln for ln in lines for rule in ("inertia-mismatch", "density-implausible")), text

"""Numbers a fix writes: short, yet valid after the reader parses them back.

Shared by the URDF and SDFormat writers. Each value gets the fewest
significant digits that keep it within 1e-9 (relative to its group's scale)
of the intended value; then the parsed-back tensor is re-tested with the
validity tests of :mod:`linkcheck.inertia`, and digits are added until every
test the intended tensor passes still passes.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Callable

import numpy as np

from linkcheck import inertia as inr

#: Written values are within this of the intended ones, relative to their group's scale.
RTOL = 1e-9
#: A file's own text within this of the intended value (relative to its group's scale) is kept:
#: 9-digit texts are off by up to 3e-9 of the largest moment, far below what an estimate can tell.
KEEP_RTOL = 1e-6
#: Written angles are within this many radians of the intended ones.
ANGLE_ATOL = 1e-10

#: Largest magnitude a reader accepts: squares and tensor norms of larger numbers overflow float64,
#: and no robot description means them.
MAX_MAGNITUDE = 1e30
TOO_LARGE = "expected a number no larger than 1e30 in size"

INERTIA_KEYS = ("ixx", "ixy", "ixz", "iyy", "iyz", "izz")
_INDEX = {"ixx": (0, 0), "ixy": (0, 1), "ixz": (0, 2), "iyy": (1, 1), "iyz": (1, 2), "izz": (2, 2)}


@dataclass(frozen=True)
class InertialEdit:
    """A new inertial block to write.

    ``com`` (m) is in the link frame; ``rotation`` is the inertial frame's
    orientation in the link frame (identity writes rpy "0 0 0");
    ``inertia_frame`` (kg m^2) is the tensor about the COM in that frame's axes.
    """

    mass: float
    com: np.ndarray
    rotation: np.ndarray
    inertia_frame: np.ndarray


def _clean(text: str) -> str:
    if "e" in text:
        mant, exp = text.split("e")
        sign = "-" if exp.startswith("-") else ""
        exp = exp.lstrip("+-").lstrip("0") or "0"
        return f"{mant}e{sign}{exp}"
    return text


def format_number(x: float, digits: int | None = None) -> str:
    """``x`` with ``digits`` significant digits (default: shortest exact round trip)."""
    x = float(x)
    if not np.isfinite(x):
        raise ValueError(f"cannot write a non-finite number ({x})")
    if x == 0:
        return "0"
    if digits is None:
        text = repr(x)
        if text.endswith(".0"):
            text = text[:-2]
        return _clean(text)
    text = f"{x:.{digits}g}"
    if "e" in text and 1 <= abs(x) < 1e7:
        text = f"{float(text):.0f}"  # 30, not 3e1: integers read as integers in a diff
    return "0" if float(text) == 0 else _clean(text)


def shortest(x: float, atol: float, min_digits: int = 1) -> str:
    """The shortest text of ``x`` that parses back within ``atol`` of it."""
    x = float(x)
    if abs(x) <= atol:
        return "0"
    for digits in range(max(min_digits, 1), 18):
        text = format_number(x, digits)
        if abs(float(text) - x) <= atol:
            return text
    return format_number(x)


def rpy_text(rotation: np.ndarray, min_digits: int = 1) -> str:
    """URDF/SDF roll-pitch-yaw text of a rotation matrix (identity gives "0 0 0")."""
    rpy = inr.matrix_to_rpy(np.asarray(rotation, dtype=float))
    return " ".join(shortest(a, ANGLE_ATOL, min_digits) for a in rpy)


def quat_xyzw(rotation: np.ndarray) -> np.ndarray:
    """Unit quaternion (x, y, z, w) of a rotation matrix, w >= 0."""
    r = np.asarray(rotation, dtype=float)
    m = [1 + r[0, 0] + r[1, 1] + r[2, 2], 1 + r[0, 0] - r[1, 1] - r[2, 2], 1 - r[0, 0] + r[1, 1] - r[2, 2],
         1 - r[0, 0] - r[1, 1] + r[2, 2]]
    k = int(np.argmax(m))
    s = 2 * np.sqrt(max(m[k], 0.0))
    if k == 0:
        q = [(r[2, 1] - r[1, 2]) / s, (r[0, 2] - r[2, 0]) / s, (r[1, 0] - r[0, 1]) / s, s / 4]
    elif k == 1:
        q = [s / 4, (r[0, 1] + r[1, 0]) / s, (r[0, 2] + r[2, 0]) / s, (r[2, 1] - r[1, 2]) / s]
    elif k == 2:
        q = [(r[0, 1] + r[1, 0]) / s, s / 4, (r[1, 2] + r[2, 1]) / s, (r[0, 2] - r[2, 0]) / s]
    else:
        q = [(r[0, 2] + r[2, 0]) / s, (r[1, 2] + r[2, 1]) / s, s / 4, (r[1, 0] - r[0, 1]) / s]
    q = np.array(q)
    return -q if q[3] < 0 else q


_PLAIN_NUMBER = re.compile(r"\s*[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?\s*\Z")


def prefer_existing(edit: InertialEdit, texts: dict[str, str], old: dict[str, str | None],
                    rtol: float = inr.TENSOR_RTOL) -> dict[str, str]:
    """``texts`` with the file's own text wherever it already says the intended number.

    ``old`` maps ``mass``, ``xyz`` and ``ixx``..``izz`` to the file's current texts. A text
    within KEEP_RTOL of the intended value (relative to its group's scale) is kept, so a fix
    does not rewrite ``0.000141666667`` as ``0.0001416666667``; not when the kept values would
    fail a test the new ones pass.
    """
    tensor = np.asarray(edit.inertia_frame, dtype=float)
    tensor = (tensor + tensor.T) / 2
    t_scale = float(np.max(np.abs(np.diag(tensor)))) or float(np.max(np.abs(tensor))) or 1.0
    com = np.asarray(edit.com, dtype=float)
    c_scale = float(np.max(np.abs(com))) or 1.0

    def says(raw: str | None, want: float, atol: float) -> bool:
        return raw is not None and bool(_PLAIN_NUMBER.match(raw)) and abs(float(raw) - want) <= atol

    out = dict(texts)
    if says(old.get("mass"), edit.mass, KEEP_RTOL * abs(edit.mass)):
        out["mass"] = str(old["mass"]).strip()
    parts = (old.get("xyz") or "").split()
    if len(parts) == 3 and all(says(p, c, KEEP_RTOL * c_scale) for p, c in zip(parts, com)):
        out["xyz"] = str(old["xyz"])
    for key, (i, j) in _INDEX.items():
        if says(old.get(key), tensor[i, j], KEEP_RTOL * t_scale):
            out[key] = str(old[key]).strip()
    if out == texts:
        return texts
    new = _tests(tensor_of({k: float(texts[k]) for k in INERTIA_KEYS}), rtol)
    kept = _tests(tensor_of({k: float(out[k]) for k in INERTIA_KEYS}), rtol)
    return out if all(k or not n for k, n in zip(kept, new)) else texts


def tensor_of(values: dict[str, float]) -> np.ndarray:
    """The symmetric tensor of ixx..izz values."""
    t = np.zeros((3, 3))
    for key, (i, j) in _INDEX.items():
        t[i, j] = t[j, i] = values[key]
    return t


def _tests(tensor: np.ndarray, rtol: float) -> tuple[bool, bool]:
    return inr.is_positive_definite(tensor, rtol), inr.satisfies_triangle(tensor, rtol)


def format_edit(
    edit: InertialEdit,
    check: Callable[[dict[str, float]], bool] | None = None,
    rtol: float = inr.TENSOR_RTOL,
) -> dict[str, str]:
    """Texts for ``mass``, ``xyz``, ``rpy``, ``quat_xyzw`` and ``ixx``..``izz`` of an edit.

    ``check`` is an extra test of the parsed-back values (keys as returned, numbers);
    ``rtol`` is the relative tolerance of the tensor tests (settings.tensor_rtol).
    """
    tensor = np.asarray(edit.inertia_frame, dtype=float)
    tensor = (tensor + tensor.T) / 2
    com = np.asarray(edit.com, dtype=float)
    want_pd, want_tri = _tests(tensor, rtol)
    t_scale = float(np.max(np.abs(np.diag(tensor)))) or float(np.max(np.abs(tensor))) or 1.0
    c_scale = float(np.max(np.abs(com))) or 1.0
    q = quat_xyzw(edit.rotation)
    for min_digits in range(1, 18):
        texts = {"mass": shortest(edit.mass, RTOL * abs(edit.mass), min_digits)}
        texts["xyz"] = " ".join(shortest(c, RTOL * c_scale, min_digits) for c in com)
        texts["rpy"] = rpy_text(edit.rotation, min_digits)
        texts["quat_xyzw"] = " ".join(shortest(c, ANGLE_ATOL, min_digits) for c in q)
        for key, (i, j) in _INDEX.items():
            texts[key] = shortest(tensor[i, j], RTOL * t_scale, min_digits)
        back = {k: float(texts[k]) for k in ("mass", *INERTIA_KEYS)}
        pd, tri = _tests(tensor_of(back), rtol)
        if (pd or not want_pd) and (tri or not want_tri) and (check is None or check(back)):
            return texts
    return texts

"""Numbers in an engineer's words: short, with units. Shared by the rule messages."""

from __future__ import annotations

import numpy as np


def num(x: float, digits: int = 3) -> str:
    """A number to ``digits`` significant digits without noise: '0.00412', '1.2e-7', '250'."""
    text = f"{float(x):.{digits}g}"
    mantissa, _, exp = text.partition("e")
    return f"{mantissa}e{int(exp)}" if exp else mantissa


def length(metres: float) -> str:
    """A length in mm below one metre, in m above."""
    if abs(metres) < 1.0:
        return f"{num(metres * 1000)} mm"
    return f"{num(metres)} m"


def kg(mass: float) -> str:
    return f"{num(mass)} kg"


def moments(values: np.ndarray) -> str:
    return "(" + ", ".join(num(v) for v in values) + ") kg m²"


def tensor(inertia: np.ndarray) -> str:
    """The six entries a URDF/SDF author writes."""
    i = np.asarray(inertia)
    names = ("ixx", "iyy", "izz", "ixy", "ixz", "iyz")
    vals = (i[0, 0], i[1, 1], i[2, 2], i[0, 1], i[0, 2], i[1, 2])
    return ", ".join(f"{n} {num(v)}" for n, v in zip(names, vals) if n in names[:3] or abs(v) > 1e-12 * abs(np.trace(i)))


def percent(fraction: float) -> str:
    p = 100 * fraction
    return f"{num(p, 2)}%" if abs(p) < 10 else f"{p:.0f}%"

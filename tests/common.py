"""Shared test geometries and helpers.

Reference values carry their source beside them. "from memory" marks values recalled from a
published table rather than read from it during this work.
"""

from __future__ import annotations

import math
import subprocess
import sys
from pathlib import Path

import numpy as np

from tracer.section.geometry import Section


def star_ring(rng: np.random.Generator, n: int = 12, *, centre=(0.0, 0.0), r_min: float = 0.3) -> np.ndarray:
    """A random star-shaped ring of n vertices, counter-clockwise.

    The angles are jittered about an even spacing, so no gap between them reaches 180 degrees
    (for n >= 4) and the ring is simple.
    """
    angles = (np.arange(n) + rng.uniform(-0.3, 0.3, n)) * (2.0 * math.pi / n)
    radii = rng.uniform(r_min, 1.0, n) * rng.uniform(5.0, 200.0)
    return np.column_stack([centre[0] + radii * np.cos(angles), centre[1] + radii * np.sin(angles)])


def rectangle_ring(x0: float, y0: float, x1: float, y1: float) -> list[tuple[float, float]]:
    return [(x0, y0), (x1, y0), (x1, y1), (x0, y1)]


def tensor(p) -> np.ndarray:
    """Centroidal second-moment tensor [[∫x'^2, ∫x'y'], [∫x'y', ∫y'^2]] = [[Iy, Ixy], [Ixy, Ix]]."""
    return np.array([[p.Iy, p.Ixy], [p.Ixy, p.Ix]])


def rel(a: float, b: float) -> float:
    return abs(a - b) / abs(b)


def unit_square_section() -> Section:
    return Section(rectangle_ring(0, 0, 1, 1))


# Rolled steel sections: dimensions [mm] and published properties [cm units].
# Source: EN 10365:2017 (hot rolled steel channels, I and H sections - dimensions and masses),
# section property tables as printed in the European steel producers' catalogues;
# values from memory. Keys: A [cm^2], Iy Iz [cm^4], Wel_y Wel_z Wpl_y Wpl_z [cm^3].
# (The table's y is tracer's x: the strong axis.)
EN_I_SECTIONS = {
    "IPE 100": (dict(h=100, b=55, tw=4.1, tf=5.7, r=7),
                dict(A=10.32, Iy=171.0, Wel_y=34.20, Wpl_y=39.41, Iz=15.92, Wel_z=5.79, Wpl_z=9.15)),
    "IPE 200": (dict(h=200, b=100, tw=5.6, tf=8.5, r=12),
                dict(A=28.48, Iy=1943, Wel_y=194.3, Wpl_y=220.6, Iz=142.4, Wel_z=28.47, Wpl_z=44.61)),
    "IPE 300": (dict(h=300, b=150, tw=7.1, tf=10.7, r=15),
                dict(A=53.81, Iy=8356, Wel_y=557.1, Wpl_y=628.4, Iz=603.8, Wel_z=80.50, Wpl_z=125.2)),
    "HE 200 A": (dict(h=190, b=200, tw=6.5, tf=10, r=18),
                 dict(A=53.83, Iy=3692, Wel_y=388.6, Wpl_y=429.5, Iz=1336, Wel_z=133.6, Wpl_z=203.8)),
    "HE 200 B": (dict(h=200, b=200, tw=9, tf=15, r=18),
                 dict(A=78.08, Iy=5696, Wel_y=569.6, Wpl_y=642.5, Iz=2003, Wel_z=200.3, Wpl_z=305.8)),
}

# Hollow sections, EN 10210-2:2019 (hot finished), tables of properties; values from memory.
# Corner radii for the properties of hot-finished RHS: ro = 1.5 t, ri = 1.0 t (EN 10210-2, from memory).
EN_CHS = {
    "CHS 168.3x8.0": (dict(d=168.3, t=8.0), dict(A=40.3, I=1297, Wel=154, Wpl=206)),
}
EN_RHS = {
    "RHS 200x100x8.0": (dict(h=200, b=100, t=8.0, ro=12.0, ri=8.0),
                        dict(A=44.8, Iy=2234, Iz=739, Wel_y=223, Wel_z=148, Wpl_y=282, Wpl_z=172)),
}

# Equal angle, EN 10056-1:2017 dimensions (r1 root = 12, r2 toe = 6) with the property tables
# of the producers' catalogues; values from memory. Iu, Iv principal [cm^4]; e centroid [cm].
EN_ANGLES = {
    "L 100x100x10": (dict(h=100, b=100, t=10, r=12, rt=6),
                     dict(A=19.2, Iy=177, Wel=24.6, Iu=280, Iv=73.0, e=2.82)),
}

# Dressed (surfaced dry) lumber, NDS Supplement (American Wood Council), Table 1B "Section
# properties of standard dressed (S4S) sawn lumber", 2018 edition; values from memory.
# (b, d) [in]; A [in^2], Sxx [in^3], Ixx [in^4], Syy [in^3], Iyy [in^4].
NDS_LUMBER = {
    "2x4": ((1.5, 3.5), dict(A=5.25, Sxx=3.063, Ixx=5.359, Syy=1.313, Iyy=0.984)),
    "2x10": ((1.5, 9.25), dict(A=13.88, Sxx=21.39, Ixx=98.93, Syy=3.469, Iyy=2.602)),
    "2x12": ((1.5, 11.25), dict(A=16.88, Sxx=31.64, Ixx=178.0)),
    "4x4": ((3.5, 3.5), dict(A=12.25, Sxx=7.146, Ixx=12.51)),
}


def printed_tolerance(value: float) -> float:
    """Half a unit in the last digit a table prints for `value` (4 significant digits at most),
    plus a hair for binary rounding: the tolerance of a check against a printed table."""
    text = f"{value}"
    decimals = len(text.split(".")[1]) if "." in text else 0
    return 0.5 * 10.0 ** (-decimals) * (1 + 1e-9)


def run_tracer(*args: str) -> subprocess.CompletedProcess:
    """``python -m tracer ARGS`` as a user runs it, output captured as text."""
    return subprocess.run([sys.executable, "-m", "tracer", *args], capture_output=True, text=True)


def sheet_file(folder: Path, name: str, text: str) -> Path:
    """Write a sheet's text to ``folder/name`` and return its path."""
    p = folder / name
    p.write_text(text)
    return p

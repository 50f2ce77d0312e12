"""Widths measured at heights (stations) to a polygon, for irregular solid members.

A person measures a hewn or weathered member by holding a square against one face and reading,
at several heights y, where the left and the right face are. The section is the polygon through
those readings, straight between stations (the measured points are its vertices).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from ..errors import GeometryError
from .geometry import Section

__all__ = ["stations_section", "stations_jacobian"]


def stations_section(rows: Sequence[Sequence[float]]) -> Section:
    """The section through stations ``[y, x_left, x_right]``.

    Parameters
    ----------
    rows : sequence of [y, x_left, x_right]
        Height of the station and the positions of the left and right face there [mm], in any
        order of y. At the lowest and highest station the faces may meet (x_left = x_right).

    Returns
    -------
    Section
        Up the right faces, then down the left faces.

    Raises
    ------
    GeometryError
        Fewer than two stations, a station that is not three numbers, two stations at one
        height, or x_right <= x_left at an inner station.

    Examples
    --------
    >>> from tracer.section.properties import area_moments
    >>> area_moments(stations_section([[0, 0, 40], [100, 5, 35]])).A
    3500.0
    """
    table = []
    for i, row in enumerate(rows, start=1):
        try:
            values = [float(v) for v in row]
        except (TypeError, ValueError):
            raise GeometryError(f"station {i} = {row!r} must be three numbers [y, x_left, x_right]") from None
        if len(values) != 3:
            raise GeometryError(f"station {i} = {list(row)!r} must be three numbers [y, x_left, x_right]")
        if not np.all(np.isfinite(values)):
            raise GeometryError(f"station {i} = {values!r} has a NaN or infinite value")
        table.append(values)
    if len(table) < 2:
        raise GeometryError(f"{len(table)} station(s) given; at least two heights are needed")
    arr = np.asarray(table)
    order = np.argsort(arr[:, 0], kind="stable")
    arr = arr[order]
    same = np.flatnonzero(np.diff(arr[:, 0]) == 0)
    if same.size:
        i, j = sorted(order[same[0]:same[0] + 2] + 1)
        raise GeometryError(f"stations {i} and {j} are both at y = {arr[same[0], 0]:.6g}; give each height once")
    width = arr[:, 2] - arr[:, 1]
    for k, w in enumerate(width):
        end = k in (0, len(arr) - 1)
        if w < 0 or (w == 0 and not end):
            raise GeometryError(
                f"station {order[k] + 1} at y = {arr[k, 0]:.6g}: x_right = {arr[k, 2]:.6g} must be greater than "
                f"x_left = {arr[k, 1]:.6g}")
    xy, _ = _ring(arr, order)
    return Section(xy)


def stations_jacobian(rows: Sequence[Sequence[float]]) -> np.ndarray:
    """d(vertex coordinates)/d(reading) of :func:`stations_section`, readings row by row.

    Returns
    -------
    ndarray, shape (3 R, 2, N)
        Row i of the input contributes the readings ``3i`` (y), ``3i + 1`` (x_left) and
        ``3i + 2`` (x_right). At a pointed end (x_left = x_right) the one vertex sits at their mean.
    """
    arr = np.asarray(rows, dtype=float)
    order = np.argsort(arr[:, 0], kind="stable")
    _, jac = _ring(arr[order], order)
    return jac


def _ring(arr: np.ndarray, order: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Vertices up the right faces and down the left faces, and their Jacobian.

    `arr` is sorted by height; `order[k]` is the input row of sorted row k.
    """
    n = len(arr)
    pointed = np.zeros(n, dtype=bool)
    pointed[[0, -1]] = arr[[0, -1], 2] == arr[[0, -1], 1]
    right = list(range(n))
    left = [k for k in range(n - 1, -1, -1) if not pointed[k]]
    verts = [(k, "right") for k in right] + [(k, "left") for k in left]
    xy = np.empty((len(verts), 2))
    jac = np.zeros((3 * n, 2, len(verts)))
    for i, (k, side) in enumerate(verts):
        row = 3 * order[k]
        jac[row, 1, i] = 1.0                                   # y of the station
        if side == "right" and pointed[k]:
            xy[i] = (0.5 * (arr[k, 1] + arr[k, 2]), arr[k, 0])
            jac[row + 1, 0, i] = jac[row + 2, 0, i] = 0.5
        else:
            col = 2 if side == "right" else 1
            xy[i] = (arr[k, col], arr[k, 0])
            jac[row + col, 0, i] = 1.0
    return xy, jac

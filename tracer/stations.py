"""Widths measured at heights (stations) to a polygon, for irregular solid members.

A person measures a hewn or weathered member by holding a square against one face and reading,
at several heights y, where the left and the right face are. The section is the polygon through
those readings, straight between stations (the measured points are its vertices).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from .errors import GeometryError
from .geometry import Section

__all__ = ["stations_section"]


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
    >>> from tracer.properties import area_moments
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
    right = arr[:, [2, 0]]
    left = arr[::-1][:, [1, 0]]
    return Section(np.vstack([right, left]))

"""Closed iso-lines of a field known in rectangles: marching squares, assembled without loops.

The field (an image less its local edge level) is given patch by patch, each patch owning the
cells whose top-left pixel lies in it; the zero crossings on the cells' edges are found by
linear interpolation between the two pixels of the edge, and each cell contributes its one or
two oriented segments [1]_ (the field's positive side on the same hand of every segment). An
edge crossing is named by its pixel and its kind (along a row or down a column), so the
segments of neighbouring patches join by name, not by floating-point position. Segments are
chained into rings by sorting the names and by pointer doubling (cycle labels and the order
along each cycle) [2]_, all as array operations.

References
----------
.. [1] W. E. Lorensen and H. E. Cline, "Marching cubes: a high resolution 3D surface construction
       algorithm," *Computer Graphics*, vol. 21, no. 4, pp. 163-169, 1987.
       doi: 10.1145/37402.37422.
.. [2] J. C. Wyllie, *The Complexity of Parallel Computations*, PhD thesis, Cornell University,
       1979 (list ranking by pointer jumping).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

__all__ = ["Isolines"]

# Cell edges: 0 top (tl-tr), 1 right (tr-br), 2 bottom (bl-br), 3 left (tl-bl). Each edge runs
# from pixel a to pixel b, offsets (row, column) from the cell's top-left pixel; kind 0 lies
# along a row (named by its left pixel), kind 1 down a column (named by its upper pixel).
_A = np.array([[0, 0], [0, 1], [1, 0], [0, 0]])
_B = np.array([[0, 1], [1, 1], [1, 1], [1, 0]])
_KIND = np.array([0, 1, 0, 1])
# The same ends as corner numbers (tl 0, tr 1, br 2, bl 3).
_CORNER_A = np.array([0, 1, 3, 0])
_CORNER_B = np.array([1, 2, 2, 3])


def _table() -> np.ndarray:
    """(32, 2, 2) edge pairs, from -> to, of each case (corners tl, tr, br, bl as bits 0-3; +16
    where a saddle's centre is positive), -1 where a cell has fewer segments. Oriented so that the
    positive corners lie to the left of the direction of travel (x along columns, y down rows)."""
    corner = np.array([[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]])       # (x, y) of tl tr br bl
    mid = np.array([[0.5, 0.0], [1.0, 0.5], [0.5, 1.0], [0.0, 0.5]])          # of edges 0..3
    # The segment that cuts off a corner joins the corner's two edges.
    cut_off = {0: (3, 0), 1: (0, 1), 2: (1, 2), 3: (2, 3)}
    out = -np.ones((32, 2, 2), int)
    for case in range(32):
        bits = case & 15
        pos = [(bits >> k) & 1 == 1 for k in range(4)]
        if bits in (0, 15):
            continue
        if bits in (5, 10):                           # a saddle: the centre decides which join
            centre_pos = case >= 16
            lone = [k for k in range(4) if pos[k] != centre_pos]
            pairs = [(cut_off[k], k) for k in lone]
        elif sum(pos) in (1, 3):                      # one corner unlike the other three
            k = next(k for k in range(4) if pos[k] == (sum(pos) == 1))
            pairs = [(cut_off[k], k)]
        else:                                         # two neighbouring corners alike: a straight cut
            k = next(k for k in range(4) if pos[k])
            pairs = [((3, 1) if pos[0] == pos[1] else (0, 2), k)]
        for n, ((e1, e2), k) in enumerate(pairs):
            d, q = mid[e2] - mid[e1], corner[k] - mid[e1]
            left = d[0] * q[1] - d[1] * q[0] < 0      # y down: a negative cross product is the left
            if left != pos[k]:
                e1, e2 = e2, e1
            out[case, n] = (e1, e2)
    return out


_CASES = _table()


@dataclass
class Isolines:
    """The zero iso-lines of a field given patch by patch over a box of `width` pixel columns.

    Add each patch with :meth:`add`; :meth:`rings` gives the closed lines (x = column, y = row,
    in the box's pixels). Lines that leave the patches given are open and left out.

    Where a cell's diagonal corners are alike (a saddle), ``saddle="mean"`` joins the corners
    of the sign of the cell's mean value (alike for bright and dark members); ``"low"`` and
    ``"high"`` always join the negative or the positive ones (scikit-image's
    ``fully_connected``).
    """

    width: int
    saddle: str = "mean"
    _cells: list = field(default_factory=list)
    _corners: list = field(default_factory=list)

    def add(self, values: np.ndarray, row: int, col: int, rows: int, cols: int) -> None:
        """The field at pixel rows row.. and columns col.. of the box (`values`, at least
        rows + 1 by cols + 1); the patch owns the rows x cols cells from its first pixel."""
        v = values[:rows + 1, :cols + 1]
        p = (v > 0).view(np.uint8)
        case = p[:-1, :-1] | (p[:-1, 1:] << 1) | (p[1:, 1:] << 2) | (p[1:, :-1] << 3)
        r, c = np.nonzero((case != 0) & (case != 15))
        if len(r):
            self._cells.append(np.column_stack([row + r, col + c, case[r, c]]))
            self._corners.append(np.column_stack([v[r, c], v[r, c + 1], v[r + 1, c + 1], v[r + 1, c]]))

    def rings(self) -> list[np.ndarray]:
        """The closed iso-lines, each an (N, 2) array of (x, y) without a repeated point."""
        if not self._cells:
            return []
        cells = np.concatenate(self._cells)
        corners = np.concatenate(self._corners).astype(np.float64)
        r, c, cs = cells[:, 0], cells[:, 1], cells[:, 2]
        saddle = (cs == 5) | (cs == 10)
        joined = {"mean": corners.sum(axis=1) > 0, "low": False, "high": True}[self.saddle]
        cs = cs + 16 * (saddle & joined)
        seg = np.concatenate([np.nonzero(_CASES[cs, n, 0] >= 0)[0] for n in range(2)])
        which = np.concatenate([np.zeros(int((_CASES[cs, 0, 0] >= 0).sum()), int),
                                np.ones(int((_CASES[cs, 1, 0] >= 0).sum()), int)])
        e = _CASES[cs[seg], which]                          # (segments, 2): edge from, edge to
        start, xy = self._crossing(corners[seg], r[seg], c[seg], e[:, 0])
        end, _ = self._crossing(corners[seg], r[seg], c[seg], e[:, 1])
        return _chain(start, end, xy)

    def _crossing(self, corners: np.ndarray, r: np.ndarray, c: np.ndarray,
                  e: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Name and position of the zero crossing on edge `e` of cells (r, c)."""
        i = np.arange(len(e))
        va, vb = corners[i, _CORNER_A[e]], corners[i, _CORNER_B[e]]
        t = va / (va - vb)                            # the edge's two pixels lie either side of 0
        ra, ca = r + _A[e, 0], c + _A[e, 1]
        x = ca + t * (_B[e, 1] - _A[e, 1])
        y = ra + t * (_B[e, 0] - _A[e, 0])
        key = 2 * (ra.astype(np.int64) * (self.width + 2) + ca) + _KIND[e]
        return key, np.column_stack([x, y])


def _chain(start: np.ndarray, end: np.ndarray, xy: np.ndarray) -> list[np.ndarray]:
    """Rings of the segments start -> end (names), each the start points in order."""
    n = len(start)
    if not n:
        return []
    order = np.argsort(start, kind="stable")
    j = np.minimum(np.searchsorted(start[order], end), n - 1)
    idx = np.arange(n)
    nxt = np.where(start[order[j]] == end, order[j], idx)      # a dead end points at itself
    steps = max(1, int(np.ceil(np.log2(n))) + 1)
    # Cycle labels: the smallest index reachable (the same all round a cycle).
    label, p = idx.copy(), nxt.copy()
    for _ in range(steps):
        label = np.minimum(label, label[p])
        p = p[p]
    on_cycle = nxt[p] != p                            # pieces that run into a dead end stop there
    # Order along each cycle: cut it before its smallest index and rank by pointer doubling.
    succ = np.where(on_cycle & (nxt != label), nxt, idx)
    dist = (succ != idx).astype(np.int64)
    s = succ.copy()
    for _ in range(steps):
        dist = dist + dist[s]
        s = s[s]
    keep = np.nonzero(on_cycle)[0]
    if not len(keep):
        return []
    keep = keep[np.lexsort((-dist[keep], label[keep]))]
    cuts = np.nonzero(np.diff(label[keep]))[0] + 1
    return [xy[k] for k in np.split(keep, cuts)]

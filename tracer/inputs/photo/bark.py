"""Bark on a log end or a waney edge: where it is seen, and the wood inside it.

Bark carries no load, and round timber is taken under bark (common practice), but a person
photographing a log end sees the whole face, bark included, and that is what is traced by
default; the table then says bark was included and how much of the outline it covers. With
``--under-bark`` the wood inside the bark is traced instead.

Bark is an outer layer of the face that looks unlike the wood just inside it. On the member's
mask the distance to its outline splits the face into a rim (the outermost few per cent of its
radius) and the outer wood (a band further in). Where their colours differ clearly (ΔE*ab over
:data:`MIN_DELTA_E` [1]_), every pixel of the outer band of the face is given to one or the other
by a minimum graph cut between local colour models of the two
(:func:`~tracer.inputs.photo.regions.local_costs`, [2]_), the deep wood held to the wood and the
outline's own pixels to the bark. The bark is what the cut gives to the rim; it is *seen* where it
covers at least :data:`MIN_COVERAGE` of the outline.

References
----------
.. [1] CIE 15:2004, *Colorimetry*, 3rd ed., sec. 8.2.1 (CIE 1976 colour difference ΔE*ab).
.. [2] Y. Boykov and M.-P. Jolly, "Interactive graph cuts for optimal boundary and region
       segmentation of objects in N-D images," in *Proc. ICCV*, 2001, pp. 105-112.
       doi: 10.1109/ICCV.2001.937505.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

__all__ = ["Bark", "find_bark", "MIN_DELTA_E", "MIN_COVERAGE"]

#: The rim and the outer wood must differ by at least this colour difference [ΔE*ab] for bark.
MIN_DELTA_E = 8.0
#: Bark is seen where it covers at least this share of the outline.
MIN_COVERAGE = 0.25
# The rim: the outermost share of the face's radius (at least 4 px); the outer wood: the band
# between these shares of the radius in; the cut is free out to a quarter of the radius.
_RIM = 0.03
_WOOD = (0.12, 0.22)
_FREE = 0.25
# A face whose widest inscribed circle is smaller than this radius [px of the grid] is not
# looked at for bark (thin walls, small faces: the rim would be all edge blur).
_MIN_RADIUS = 30.0
# Extra cost [nats] of calling a pixel bark where the rim and the wood next to it look alike.
_ALIKE_COST = 4.0


@dataclass(frozen=True)
class Bark:
    """What was found of bark on the face.

    Attributes
    ----------
    seen : bool
        Bark covers at least :data:`MIN_COVERAGE` of the outline.
    coverage : float
        Share of the outline with bark on it.
    area_share : float
        Share of the face's area that is bark.
    thickness_px : float
        Mean thickness of the bark where it is [px of the full photo].
    delta_e : float
        Colour difference between the rim and the outer wood [ΔE*ab].
    wood : ndarray (m, n) bool or None
        The wood inside the bark, on the segmentation's grid (None where no bark is seen).
    """

    seen: bool
    coverage: float
    area_share: float
    thickness_px: float
    delta_e: float
    wood: np.ndarray | None = field(default=None, repr=False)

    def record(self, *, under_bark: bool) -> dict:
        """The ``source.trace.bark`` record of the result JSON."""
        return {"seen": self.seen, "traced": "wood inside the bark" if (under_bark and self.seen) else "whole face",
                "coverage": round(self.coverage, 3), "area_share": round(self.area_share, 4),
                "thickness_px": round(self.thickness_px, 2), "delta_e": round(self.delta_e, 1)}


def find_bark(seg, photo) -> Bark:
    """Look for bark on the member of `seg` (:class:`~tracer.inputs.photo.segment.Segmentation`) in
    `photo`."""
    import cv2

    from .regions import appearance, local_costs, min_cut
    from .tone import LIGHT_OF_8BIT

    member = seg.mask
    m8 = member.astype(np.uint8)
    dist = cv2.distanceTransform(np.pad(m8, 1), cv2.DIST_L2, 5)[1:-1, 1:-1]
    radius = float(dist.max())
    sx, sy = seg.step
    step = math.sqrt(sx * sy)
    # The outline's own pixels are a blend of face and ground: the rim starts two pixels in.
    rim_w = max(4.0, _RIM * radius)
    rim = member & (dist > 2.0) & (dist <= rim_w)
    # The outer wood: well inside the thickest bark seen on logs (a tenth of the radius).
    wood_band = member & (dist > max(2 * rim_w, _WOOD[0] * radius)) & (dist <= max(4 * rim_w, _WOOD[1] * radius))
    none = Bark(seen=False, coverage=0.0, area_share=0.0, thickness_px=0.0, delta_e=0.0)
    if radius < _MIN_RADIUS or not rim.any() or not wood_band.any():
        return none                                  # a thin wall or a small face: no room for bark
    # The photo on the segmentation's grid, in CIELAB.
    H, W = seg.shape
    x0, y0 = seg.origin
    r0, c0 = int(y0), int(x0)
    r1, c1 = min(H, r0 + int(round(member.shape[0] * sy))), min(W, c0 + int(round(member.shape[1] * sx)))
    crop = photo.color[r0:r1, c0:c1]
    small = cv2.resize(crop, member.shape[::-1], interpolation=cv2.INTER_AREA) if crop.shape[:2] != member.shape else crop
    app = appearance(LIGHT_OF_8BIT[small], looks=False)
    lab = app.lab
    # The rim's colour against the wood's, near each pixel: bark differs where it is (the upper
    # quartile over the rim, as bark may cover only part of the outline).
    reach = max(6.0 * rim_w, 0.1 * radius)
    local = _local_delta_e(lab, wood_band, rim, reach)
    delta_e = float(np.percentile(local[rim], 75))
    if delta_e < MIN_DELTA_E:
        return Bark(seen=False, coverage=0.0, area_share=0.0, thickness_px=0.0, delta_e=delta_e)
    free = member & (dist <= max(3 * rim_w, _FREE * radius))
    cost_wood, cost_bark = local_costs(lab, wood_band, rim, reach)
    # Where the rim looks like the wood next to it there is no bark: being bark costs the more,
    # the less the two local colours differ.
    alike = np.clip(1.0 - local / MIN_DELTA_E, 0.0, 1.0)
    cost_bark = cost_bark + _ALIKE_COST * alike
    hard_wood = member & ~free
    hard_bark = ~member | (member & (dist <= 1.0))
    cut = min_cut(app, cost_wood, cost_bark, member=hard_wood, ground=hard_bark)
    n, labels, stats, _ = cv2.connectedComponentsWithStats((cut & member).astype(np.uint8), connectivity=4)
    if n < 2:
        return none
    core = labels == 1 + int(np.argmax(stats[1:, cv2.CC_STAT_AREA]))
    from .masks import fill_holes

    wood = fill_holes(core, np.inf) & member
    bark = member & ~wood
    # Coverage: outline pixels whose bark runs at least a pixel deep (the outline's own pixel
    # is held to the bark by the cut, so one pixel alone is no bark).
    outline = member & (dist <= 1.0)
    deep = bark & (dist > 1.0) & (dist <= 3.0)
    near_deep = cv2.dilate(deep.astype(np.uint8), np.ones((5, 5), np.uint8)).astype(bool)
    coverage = float((outline & near_deep).sum()) / max(float(outline.sum()), 1.0)
    area_share = float(bark.sum()) / max(float(member.sum()), 1.0)
    covered = max(float((outline & near_deep).sum()), 1.0)
    thickness = float(bark.sum()) / covered * step
    seen = coverage >= MIN_COVERAGE
    return Bark(seen=seen, coverage=coverage, area_share=area_share, thickness_px=thickness, delta_e=delta_e,
                wood=wood if seen else None)


def _local_delta_e(lab: np.ndarray, a: np.ndarray, b: np.ndarray, reach: float) -> np.ndarray:
    """ΔE*ab between the mean colours of regions `a` and `b` near each pixel (normalised
    convolution over `reach` px); 0 where either is absent."""
    from .regions import local_mean

    ma, wa = local_mean(lab, a, reach)
    mb, wb = local_mean(lab, b, reach)
    d = np.sqrt(np.square(ma - mb).sum(axis=2))
    return np.where((wa > 1e-3) & (wb > 1e-3), d, 0.0)

"""The review page: a local web page on which a person checks a photo's trace and corrects it
(points on the member and the ground, a box, the scale, the boundary's vertices), seeing A, I1
and I2 with their U change, and saves the settings that reproduce it as the photo's sidecar.

:mod:`.session` holds one photo's state and measures it; :mod:`.server` serves the page.
"""

from .session import ReviewSession

__all__ = ["ReviewSession"]

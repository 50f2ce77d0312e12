"""The bundled sample photos: synthetic renders of invented members, with their sidecar files.

Each ``NAME.jpg`` in ``tracer/sample_images/`` has a sidecar ``NAME.toml`` that records how it
should be measured (the options of ``tracer measure``), that it is synthetic, and the true
properties of the rendered section. ``python -m tracer.inputs.photo.renders.samples`` writes them anew.
"""

from __future__ import annotations

import tomllib
from pathlib import Path

__all__ = ["SAMPLES_DIR", "sample_names", "sample_settings", "write_samples"]

#: Where the sample photos live, inside the installed package.
SAMPLES_DIR = Path(__file__).resolve().parents[3] / "sample_images"
_OPTIONS = ("target", "scale", "dpi", "seed", "max_tilt", "texture")


def sample_names() -> list[str]:
    """The bundled samples' names, sorted."""
    return sorted(p.stem for p in SAMPLES_DIR.glob("*.jpg") if p.with_suffix(".toml").exists())


def sample_settings(name: str) -> tuple[Path, dict]:
    """The photo's path and the measure options its sidecar records."""
    photo = SAMPLES_DIR / f"{name}.jpg"
    side = tomllib.loads(photo.with_suffix(".toml").read_text())
    return photo, {k: side[k] for k in _OPTIONS if k in side}


def write_samples(folder: Path = SAMPLES_DIR) -> list[Path]:
    """Render the sample scenes (all invented) and write each photo and its sidecar."""
    import cv2

    from ....section.geometry import Section
    from ....section.properties import section_properties
    from ....section.shapes import channel, rectangle, tube
    from .scene import Scene
    from .synth import render

    pitted = channel(h=152.0, b=76.0, tw=6.4, tf=9.0, r=8.0, chord_angle=0.05)
    pitted = Section.from_shapely(pitted.to_shapely().difference(
        __import__("shapely").Point(42.0, -1.0).buffer(3.0)).buffer(0))      # a pit 2 mm deep
    scenes = {
        "waney-joist": ("salvaged softwood joist with wane (synthetic photo of an invented member)",
                        Scene(section=rectangle(b=47.0, h=195.0, wane={"top_left": 16.0, "top_right": [10.0, 24.0]},
                                                chord_angle=0.05).translated(95.0, -40.0),
                              px_per_mm=5.0, tilt=7.0, tilt_axis=35.0, blur=1.3, seed=11)),
        "pitted-channel": ("rolled steel channel with a corrosion pit on its bottom flange "
                           "(synthetic photo of an invented member)",
                           Scene(section=pitted.translated(100.0, -30.0), member="steel", px_per_mm=5.0,
                                 tilt=5.0, tilt_axis=120.0, blur=1.0, seed=12)),
        "tube-and-ruler": ("steel tube beside a ruler (synthetic photo of an invented member)",
                           Scene(section=tube(d=114.3, t=6.3, chord_angle=0.05).translated(95.0, -10.0),
                                 member="steel", px_per_mm=5.0, tilt=4.0, blur=1.2, ruler=True, seed=13)),
    }
    folder.mkdir(parents=True, exist_ok=True)
    written = []
    for name, (what, scene) in scenes.items():
        r = render(scene)
        path = folder / f"{name}.jpg"
        cv2.imwrite(str(path), r.image, [cv2.IMWRITE_JPEG_QUALITY, 92])
        p = section_properties(r.section)
        cols, rows, sq = scene.target
        side = (f"# {what}.\n# Written by python -m tracer.inputs.photo.renders.samples; "
                "the truth below is the rendered section.\n"
                f'name = "{name} (synthetic)"\ntarget = "{cols}x{rows}:{sq:g}mm"\n\n[truth]\n'
                f"A = {p.A!r}      # mm^2\nI1 = {p.I1!r}     # mm^4\nI2 = {p.I2!r}     # mm^4\n")
        path.with_suffix(".toml").write_text(side)
        written.append(path)
    return written


if __name__ == "__main__":  # pragma: no cover
    for p in write_samples():
        print(p)

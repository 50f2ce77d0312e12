"""What ``tracer review`` opens: photos named on the command line, or the members of a batch
output folder that failed or need review (saving one reruns its record and the inventory)."""

from __future__ import annotations

from pathlib import Path
from typing import Any, Sequence

from ..errors import InputError
from .session import ReviewSession

__all__ = ["review_sessions"]


def review_sessions(inputs: Sequence[str], options: dict[str, Any],
                    out: Path | None) -> tuple[list[ReviewSession], str]:
    """The photos to review, and the page's title.

    Parameters
    ----------
    inputs : sequence of str
        Photo files, or one batch output folder (it holds ``batch.json``).
    options : dict
        Photo options from the command line, over each photo's sidecar.
    out : Path, optional
        Where saves go (default: beside each photo; a batch's members always beside their photo,
        where the batch reads their sidecars).

    Raises
    ------
    InputError
        A photo that does not exist, a folder that is no batch output, or a batch with nothing
        to review.
    """
    from ..inputs.photo.pipeline import PHOTO_SUFFIXES

    paths = [Path(p) for p in inputs]
    if len(paths) == 1 and paths[0].is_dir():
        return _batch_sessions(paths[0], options)
    sessions = []
    for p in paths:
        if p.is_dir():
            raise InputError(f"{p}: a folder; give photos, or one batch output folder alone")
        if not p.is_file():
            raise InputError(f"{p}: no such file")
        if p.suffix.lower() not in PHOTO_SUFFIXES:
            raise InputError(f"{p}: not a photo ({' '.join(PHOTO_SUFFIXES)}); sheets need no review page")
        sessions.append(ReviewSession(p, options=dict(options), out=out))
    return sessions, "tracer review"


def _batch_sessions(out: Path, options: dict[str, Any]) -> tuple[list[ReviewSession], str]:
    from ..batch import read_plan, rerun, to_review
    from ..inputs.photo.sidecar import layer_options

    if not (out / "batch.json").is_file():
        raise InputError(f"{out}: a folder without batch.json; give photos, or a tracer batch output folder")
    _, plan, _ = read_plan(out)
    lot = layer_options(plan["defaults"], "the batch's defaults", Path.cwd())
    listed = to_review(out)
    if not listed:
        raise InputError(f"{out}: no member failed or needs review; nothing to do")

    def after_save(session: ReviewSession) -> str:
        s = rerun(out)
        return (f"batch rerun: {s.done} measured, {s.failed} failed, {s.skipped} unchanged; "
                f"{s.inventory.name} rebuilt")

    sessions = [ReviewSession(it.path, defaults=lot, options=dict(options), label=it.label, after_save=after_save,
                              note=why) for it, why in listed]
    return sessions, f"tracer review: {out.name}"

"""Reading photos and scans: formats, bit depths, EXIF orientation, DPI, a size guard."""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path

import numpy as np

from ...errors import InputError
from ...files import read_input, sha256_of

__all__ = ["Photo", "load_photo", "as_unit", "MAX_PIXELS", "PHOTO_SUFFIXES"]

#: File suffixes read as photos.
PHOTO_SUFFIXES = (".jpg", ".jpeg", ".png", ".tif", ".tiff", ".webp", ".bmp")
#: Largest image accepted [pixels]; larger ones are refused before they are decoded.
MAX_PIXELS = 120_000_000
# Formats OpenCV decodes directly (8-bit, no alpha).
_FAST = ("JPEG", "PNG", "BMP", "WEBP", "TIFF")


@dataclass(frozen=True)
class Photo:
    """A decoded photo, upright, as a grey image for measuring and a colour one for pictures.

    Attributes
    ----------
    levels : ndarray (H, W)
        Luminance as decoded: uint8 for 8-bit files (0 to 255), float32 0 to 1 otherwise. The
        measuring steps read it where they need it (a reduced copy, the member's box), so a large
        photo is not converted whole.
    alpha : ndarray (H, W) bool or None
        Where a transparent image is opaque.
    dpi : float or None
        The resolution stored in the file (scans), if any.
    path, sha256 : provenance.
    gray : ndarray (H, W) float32
        Luminance, 0 to 1 (8 and 16 bit inputs alike), made on first use.
    color : ndarray (H, W, 3) uint8
        The BGR picture: the member is found by its colour, and the review picture drawn on it.
    """

    levels: np.ndarray
    alpha: np.ndarray | None
    dpi: float | None
    path: str
    sha256: str
    _color: np.ndarray | None = field(default=None, repr=False)
    _fine: np.ndarray | None = field(default=None, repr=False)

    @property
    def shape(self) -> tuple[int, int]:
        return self.levels.shape

    @cached_property
    def gray(self) -> np.ndarray:
        return as_unit(self.levels)

    @property
    def color(self) -> np.ndarray:
        return self._color

    def light_in(self, r0: int, r1: int, c0: int, c1: int) -> np.ndarray:
        """Linear light (sRGB decoded, :mod:`tracer.inputs.photo.tone`) of rows r0:r1, columns c0:c1,
        as float32 (h, w, 3) in BGR order, 0 to 1; 16-bit files keep their finer levels."""
        from .tone import LIGHT_OF_8BIT, to_light

        if self._fine is not None:
            return to_light(self._fine[r0:r1, c0:c1])
        return LIGHT_OF_8BIT[self._color[r0:r1, c0:c1]]


def as_unit(img: np.ndarray) -> np.ndarray:
    """Grey levels as float32 0 to 1: uint8 divided by 255, floats as they are."""
    if img.dtype == np.uint8:
        out = img.astype(np.float32)
        out *= np.float32(1.0 / 255.0)
        return out
    return img.astype(np.float32, copy=False)


def load_photo(path: str | Path, *, max_pixels: int = MAX_PIXELS) -> Photo:
    """Read a JPEG, PNG, TIFF, WebP or BMP file, 8 or 16 bit, grey, colour or with alpha.

    The EXIF orientation is applied (phones rotate by tag), and the DPI of a scan is read from
    its metadata.

    Raises
    ------
    InputError
        The file is missing, not an image, unreadable, or larger than `max_pixels`.
    """
    from PIL import Image, ImageOps, UnidentifiedImageError

    import io

    p = Path(path)
    data = read_input(p, InputError)

    Image.MAX_IMAGE_PIXELS = None          # our own guard below says it better
    try:
        im = Image.open(io.BytesIO(data))
        w, h = im.size
        if w * h > max_pixels:
            raise InputError(f"{p}: {w} x {h} = {w * h / 1e6:.0f} megapixels is more than the "
                             f"{max_pixels / 1e6:.0f} MP limit; scale the photo down first")
        dpi = im.info.get("dpi")
        fast = _decode_8bit(data) if im.mode in ("RGB", "L", "YCbCr", "CMYK") and im.format in _FAST else None
        if fast is not None:
            color, gray = fast
            return Photo(levels=gray, alpha=None, dpi=_dpi(dpi), path=str(p), sha256=sha256_of(data), _color=color)
        im = ImageOps.exif_transpose(im)
        arr, alpha = _to_array(im)
    except InputError:
        raise
    except UnidentifiedImageError:
        raise InputError(f"{p}: not a readable image; use a JPEG, PNG, TIFF, WebP or BMP file") from None
    except (OSError, ValueError, SyntaxError) as e:
        raise InputError(f"{p}: not a readable image ({e}); use a JPEG, PNG, TIFF, WebP or BMP file") from None
    gray, color, fine = _gray_and_color(arr)
    return Photo(levels=gray, alpha=alpha, dpi=_dpi(dpi), path=str(p), sha256=sha256_of(data), _color=color,
                 _fine=fine)


def _dpi(dpi) -> float | None:
    try:
        v = float(dpi[0])
    except (TypeError, ValueError, IndexError):
        return None
    return v if v > 1 else None


def _decode_8bit(data: bytes) -> tuple[np.ndarray, np.ndarray] | None:
    """OpenCV's decoder for 8-bit files without alpha (faster; it applies the EXIF orientation):
    the colour picture (BGR), which the member is found in, and its grey levels (ITU-R BT.601
    weights, as the JPEG decoder's own grey), which targets and rulers are read in."""
    import cv2

    color = cv2.imdecode(np.frombuffer(data, np.uint8), cv2.IMREAD_COLOR)
    if color is None:
        return None
    return color, cv2.cvtColor(color, cv2.COLOR_BGR2GRAY)


def _to_array(im) -> tuple[np.ndarray, np.ndarray | None]:
    """Pixels as float in 0..1, (H, W) or (H, W, 3), and an alpha mask if any."""
    mode = im.mode
    alpha = None
    if mode in ("I;16", "I;16B", "I;16L", "I"):
        a = np.asarray(im, dtype=np.float64)
        top = 65535.0 if mode.startswith("I;16") or a.max() > 255 else 255.0
        return (a / top).astype(np.float32), None
    if mode == "F":
        a = np.asarray(im, dtype=np.float32)
        return a / max(float(a.max()), 1e-12), None
    if mode in ("RGBA", "LA", "PA") or (mode == "P" and "transparency" in im.info):
        rgba = np.asarray(im.convert("RGBA"))
        alpha = rgba[..., 3] > 127
        return (rgba[..., :3].astype(np.float32) / 255.0), alpha
    if mode in ("L", "1"):
        return np.asarray(im.convert("L"), dtype=np.float32) / 255.0, None
    return np.asarray(im.convert("RGB"), dtype=np.float32) / 255.0, None


def _gray_and_color(arr: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Grey levels (float 0..1), the BGR picture (uint8) and the BGR levels at full depth (float)."""
    if arr.ndim == 2:
        arr = np.repeat(arr[..., None], 3, axis=2)
    rgb = arr[..., :3]
    gray = (0.299 * rgb[..., 0] + 0.587 * rgb[..., 1] + 0.114 * rgb[..., 2]).astype(np.float32)
    fine = np.ascontiguousarray(rgb[..., ::-1], dtype=np.float32)
    color = np.clip(fine * 255.0 + 0.5, 0, 255).astype(np.uint8)
    return gray, color, fine

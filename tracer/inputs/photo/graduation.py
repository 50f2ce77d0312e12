"""Which graduation of a rule the marks read are: the longer marks held against the pitch given.

A rule's marks come in levels (common practice): a metric rule marks every millimetre (or half
millimetre), longer every 5th, longest every 10th (the centimetres); an inch rule halves the inch
again and again (1/2, 1/4, 1/8, 1/16, 1/32 in), each level's marks longer than the next finer
level's, the inches longest. :mod:`tracer.inputs.photo.ruler_read` reads the finest marks the photo
resolves and counts, in ticks read, where each level of longer marks falls. This module says what that
pattern means for the rule named by ``--pitch`` (its finest graduation):

- read at the pitch, the longer marks must fall as that rule has them (:func:`pitch_check`);
- read coarser, where blur took the finest marks, the level read is the one at which every level
  of longer marks seen is one of the rule's graduations and the longest seen are its centimetres
  or inches (:func:`graduation_read`): ticks with a longer mark every 2nd on a millimetre rule are
  its 5 mm marks, the longer ones its centimetres. The longest marks fix the level, so at most one
  fits; a pattern that fits none is refused, never guessed. One pattern fits both kinds of rule:
  a longer mark every 2nd, the longest, is a metric rule's 5 mm marks or an inch rule's half
  inches. The kind of rule is then the user's to say: with ``--pitch`` given, the reading follows
  it and its warning says the other kind would look alike; with the default (1 mm) taken for
  granted, the reading is refused until ``--pitch`` says.
"""

from __future__ import annotations

import math
from typing import Any, Sequence

from ...errors import MeasurementError

__all__ = ["graduation_ladder", "pitch_check", "graduation_read", "graduation_note", "graduation_text"]

# The graduations a metric rule may carry, finest first [mm] (common practice).
_METRIC = (0.5, 1.0, 5.0, 10.0)
# 1 in = 25.4 mm exactly (NIST SP 811).
_INCH = 25.4


def graduation_ladder(pitch_mm: float) -> tuple[float, ...]:
    """A rule's graduations from its finest, `pitch_mm`, up to its longest marks [mm].

    An inch rule of pitch 1/2^n in has every halving up to the inch; a metric rule of 0.5, 1, 5
    or 10 mm the levels of 0.5, 1, 5, 10 mm from its pitch up; any other pitch its own alone
    (nothing coarser can be identified on it).

    >>> graduation_ladder(1.0)
    (1.0, 5.0, 10.0)
    >>> [round(25.4 / v) for v in graduation_ladder(25.4 / 16)]
    [16, 8, 4, 2, 1]
    """
    n = _halvings(pitch_mm)
    if n is not None:
        return tuple(_INCH / 2**j for j in range(n, -1, -1))
    if any(_same(pitch_mm, v) for v in _METRIC):
        return (pitch_mm,) + tuple(v for v in _METRIC if v > pitch_mm * (1 + 1e-9))
    return (pitch_mm,)


def pitch_check(pitch_mm: float, long_every: int | None, stated: str, longest_every: int | None = None) -> None:
    """Hold the longer marks' spacing against the pitch (common practice): a metric rule marks
    every 5th and 10th millimetre, its longest marks the centimetres; an inch rule marks every
    2nd, 4th, 8th ... and its longest marks the inches. With the longest marks an inch rule read
    at twice its pitch (the finest marks blurred away) is told from one read right.

    Raises
    ------
    MeasurementError
        The marks contradict the pitch, or were not seen (the pitch cannot be confirmed).
    """
    verdict = _verdict(pitch_mm, long_every, stated, longest_every)
    if verdict is not None:
        raise MeasurementError(verdict[1])


def graduation_read(pitch_mm: float, levels: Sequence[int], stated: str | None = None, *, tested: int) -> int:
    """How many of the finest graduations each tick read spans: 1 where the ticks are the finest
    marks, more where blur took those and a coarser graduation was read.

    Parameters
    ----------
    pitch_mm : float
        The rule's finest graduation [mm].
    levels : sequence of int
        Every level of longer marks seen: each falls every this many ticks read.
    stated : str or None
        The ``--pitch`` as given; None where it was not (the default 1 mm is then assumed, and a
        coarser reading that an inch rule would give alike is refused).
    tested : int
        The longest spacing [ticks] at which a level could have been seen in the run read. A
        coarser graduation is identified only where the next finer graduation's longest marks
        would have fallen within it: read at that finer graduation, the rule's longest marks
        would have shown, and the longest seen could not be taken for them.

    Returns
    -------
    int
        m: the ticks read are the rule's m·`pitch_mm` graduation.

    Raises
    ------
    MeasurementError
        The longer marks were not seen, contradict the rule named, or fit no graduation of it (or,
        the pitch not given, fit a graduation of either kind of rule).

    Examples
    --------
    A millimetre rule read at its 5 mm marks (its centimetres every 2nd):

    >>> graduation_read(1.0, [2], "1mm", tested=12)
    5
    >>> graduation_read(25.4 / 16, [2, 4, 8], "1/16in", tested=16)   # its eighths: the inches every 8th
    2
    """
    text = stated or "1mm"
    seen = sorted({int(v) for v in levels})
    long_every, longest = (seen[0], seen[-1]) if seen else (None, None)
    verdict = _verdict(pitch_mm, long_every, text, longest)
    if verdict is None:
        return 1
    kind, message = verdict
    if kind != "coarser?":
        raise MeasurementError(message)
    fits = _coarser_fits(pitch_mm, seen)
    if len(fits) == 1:
        ladder = graduation_ladder(pitch_mm)
        finer = max(g for g in ladder if g < pitch_mm * fits[0] * (1 - 1e-9))
        # Were the ticks read the finer graduation's, the rule's longest marks would fall every
        # top/finer of them (every 2·longest on an inch rule): beyond the run's reach, unseen.
        unseen = round(ladder[-1] / finer)
        if unseen > tested:
            raise MeasurementError(f"the ruler's finest marks were too blurred to read, and too little of the ruler was "
                                   f"read to tell which graduation the marks read are: the longest seen (every "
                                   f"{_ordinal(longest)}) may be the rule's longest or a shorter level's, longer marks "
                                   f"every {_ordinal(unseen)} being beyond what was read; photograph more of the "
                                   "ruler, closer or sharper, or give --ruler X1,Y1,X2,Y2 along it")
    if len(fits) != 1:
        raise MeasurementError(f"the ruler's marks do not fit --pitch {text} (longer marks every {long_every} ticks, "
                               f"the longest every {longest}): its finest marks were probably too blurred to read, "
                               "and no coarser graduation of the rule fits the marks read either; photograph the "
                               "ruler closer or sharper, or check --pitch")
    m = fits[0]
    if stated is None:
        inch = _halvings(pitch_mm) is not None
        other = 0.5 if inch else _INCH / 64               # the finest rule of the other kind
        alike = _coarser_fits(other, seen)
        if alike:
            kinds = (f"a metric rule's {graduation_text(pitch_mm * m)} marks",
                     f"an inch rule's {graduation_text(other * alike[0])} marks")
            raise MeasurementError(f"the ruler's finest marks were too blurred to read, and the marks read (a longer one "
                                   f"every {_ordinal(longest)}) may be {kinds[0]} or {kinds[1]}; give --pitch 1mm or "
                                   "--pitch 1/16in to say which")
    return m


def graduation_note(reading: Any, pitch_mm: float) -> tuple[dict, list[str]]:
    """What a ruler's record says of the graduation read, and the warning where it was a coarser one.

    Parameters
    ----------
    reading : RulerReading
        Numbered in the finest graduation (after :meth:`RulerReading.renumbered`).
    pitch_mm : float
        The finest graduation [mm].

    Returns
    -------
    record : dict
        ``graduation_read_mm``: the spacing of the marks located and fitted [mm];
        ``finest_marks``: ``"read"`` (located one by one), ``"counted in"`` (seen between the
        marks located, too blurred to locate) or ``"too blurred"`` (not seen: a coarser
        graduation was identified by its longer marks).
    warnings : list of str
    """
    read = pitch_mm * reading.located_every
    if reading.located_every == 1:
        status = "read"
    elif reading.read_every == 1:
        status = "counted in"
    else:
        status = "too blurred"
    record = {"graduation_read_mm": read, "finest_marks": status}
    warnings = []
    if reading.read_every > 1:
        inch = _halvings(pitch_mm) is not None
        every = _ordinal(reading.longest_every // reading.located_every)
        note = (f"the ruler's finest marks ({graduation_text(pitch_mm)}) were too blurred to read: its "
                f"{graduation_text(read)} marks were read instead ({len(reading.s)} marks, told apart by the "
                f"{'inch' if inch else 'centimetre'} marks every {every}); the scale's uncertainty is that of their "
                "fit (photograph the ruler closer or sharper for the finest marks)")
        other = 0.5 if inch else _INCH / 64
        alike = _coarser_fits(other, [v // reading.read_every for v in reading.levels])
        if alike:
            note += (f"; --pitch says the rule is {'an inch' if inch else 'a metric'} one: "
                     f"{'a metric' if inch else 'an inch'} rule's {graduation_text(other * alike[0])} marks "
                     "would look alike")
        warnings.append(note)
    return record, warnings


def graduation_text(mm: float) -> str:
    """``5 mm``, ``1/8 in``, ``1 in``: a graduation as a rule names it.

    >>> graduation_text(25.4 / 8), graduation_text(5.0)
    ('1/8 in', '5 mm')
    """
    n = _halvings(mm)
    if n is not None:
        return "1 in" if n == 0 else f"1/{2**n} in"
    return f"{mm:g} mm"


# ---------------------------------------------------------------------------------------------
def _verdict(pitch_mm: float, long_every: int | None, stated: str,
             longest_every: int | None) -> tuple[str, str] | None:
    """None where the marks fit the pitch; else (kind, message): kind ``"unseen"`` (no longer
    marks), ``"system"`` (an inch rule's marks for a metric pitch, or the reverse) or
    ``"coarser?"`` (they may be a coarser graduation's)."""
    inch = _halvings(pitch_mm) is not None
    if long_every is None or longest_every is None:
        # Without them a reading of coarser marks (5 mm ones, blurred millimetres between) would
        # pass for the graduation: refuse rather than be wrong by a whole factor.
        return "unseen", (f"the ruler's longer marks (every 5th and 10th on a metric rule, every 2nd, 4th, 8th on "
                          f"an inch rule) were not found, so the pitch {stated} cannot be confirmed; photograph "
                          "the ruler closer or sharper, with its full marks in view")
    power_of_two = long_every & (long_every - 1) == 0

    def at(n: int, *mm: float) -> bool:
        return any(abs(n * pitch_mm - v) < 1e-6 * v for v in mm)

    if inch and power_of_two and at(longest_every, _INCH):
        return None
    if not inch and at(long_every, 1.0, 5.0, 10.0) and at(longest_every, 5.0, 10.0):
        return None
    if not inch and power_of_two and longest_every >= 8 and (longest_every & (longest_every - 1) == 0):
        return "system", (f"the ruler's longer marks fall every {long_every} ticks, as on an inch rule; --pitch "
                          f"{stated} expects every 5th and 10th; give --pitch 1/16in or 1/32in")
    if inch and long_every in (5, 10):
        return "system", (f"the ruler's longer marks fall every {long_every} ticks, as on a metric rule; --pitch "
                          f"{stated} expects every 2nd, 4th, 8th ...; give --pitch 1mm")
    return "coarser?", (f"the ruler's marks do not fit --pitch {stated} (longer marks every {long_every} ticks, "
                        f"the longest every {longest_every}): its finest marks were probably too blurred to read "
                        "and coarser ones were read instead; photograph the ruler closer or sharper, or check "
                        "--pitch")


def _coarser_fits(pitch_mm: float, seen: list[int]) -> list[int]:
    """Each m > 1 at which ticks of the m·pitch graduation would show the levels `seen`: every level
    one of the rule's graduations, the longest its centimetres or inches."""
    ladder = graduation_ladder(pitch_mm)
    if not seen:
        return []
    fits = []
    for g in ladder[1:]:
        if not all(any(_same(g * n, v) for v in ladder) for n in seen):
            continue
        if _same(g * seen[-1], ladder[-1]):
            fits.append(int(round(g / pitch_mm)))
    return fits


def _halvings(mm: float) -> int | None:
    """n where `mm` is 1/2^n inch (n >= 0), else None."""
    x = math.log2(_INCH / mm)
    n = round(x)
    return n if n >= 0 and abs(x - n) < 1e-6 else None


def _same(a: float, b: float) -> bool:
    return abs(a - b) <= 1e-6 * max(abs(a), abs(b))


def _ordinal(n: int) -> str:
    """2nd, 3rd, 4th, 8th, 16th, 32nd ..."""
    if n % 100 in (11, 12, 13):
        return f"{n}th"
    return f"{n}{({1: 'st', 2: 'nd', 3: 'rd'}).get(n % 10, 'th')}"

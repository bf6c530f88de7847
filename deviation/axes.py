"""The axes column: how an electronic sensor is mounted, as signed vessel axes (``x+ y-``)."""

from __future__ import annotations

import difflib
import re

import numpy as np

#: Named mounting orientations and the axes they stand for.
NAMED_AXES = {
    "forward left up": "x+ y+ z+",      # the vessel's own axes
    "forward right down": "x+ y- z-",   # the aircraft body convention, mounted level, forward
}
_TOKEN = re.compile(r"^([+-]?)([xyz])([+-]?)$")
_UNIT = {"x": 0, "y": 1, "z": 2}


class AxesError(ValueError):
    """An axes cell that does not describe a right-handed mounting; the message says why."""


def _axes_text(rows):
    return " ".join("xyz"[int(np.argmax(np.abs(r)))] + ("+" if r.max() > 0 else "-")
                    for r in rows)


def parse_axes(text: str) -> np.ndarray:
    """The sensor's axes in the vessel frame from the notation of the axes column.

    Parameters
    ----------
    text : str
        Two or three signed vessel axes, the i-th naming the vessel axis the sensor's i-th axis
        (x, y, z) points along, e.g. ``"x+ y-"``: its x forward (vessel +x), its y to starboard
        (vessel -y), its z then x cross y (down). The sign may come first (``"+x -y"``); a
        missing sign is +. Or a name of :data:`NAMED_AXES`.

    Returns
    -------
    (3, 3) array
        Rows are the sensor's x, y, z axes as unit vectors in the vessel frame, so a vector in
        the sensor's axes is ``axes @ b_vessel``. A proper rotation (determinant +1).

    Raises
    ------
    AxesError
        Not two or three axes, an unknown axis, a vessel axis named twice, or three axes that
        make a mirror image (not right-handed); the message suggests a correction where one is
        clear.
    """
    words = " ".join(str(text).replace(",", " ").split()).lower()
    if words in NAMED_AXES:
        words = NAMED_AXES[words]
    tokens = words.split()
    close = difflib.get_close_matches(words, list(NAMED_AXES), n=1, cutoff=0.6)
    hint = f'; did you mean "{close[0]}"?' if close else ""
    if len(tokens) not in (2, 3) or (close and not all(_TOKEN.match(t) for t in tokens)):
        raise AxesError(f'"{text}" is not a mounting: give two or three signed vessel axes, the '
                        "sensor's x first (e.g. x+ y-), or one of "
                        f'{", ".join(NAMED_AXES)}{hint}')
    rows = []
    letters = []
    for token in tokens:
        match = _TOKEN.match(token)
        if not match or (match.group(1) and match.group(3)):
            raise AxesError(f'"{token}" is not a vessel axis: each is x, y or z with its sign, '
                            "e.g. x+ or y-")
        sign = -1.0 if "-" in (match.group(1) + match.group(3)) else 1.0
        row = np.zeros(3)
        row[_UNIT[match.group(2)]] = sign
        rows.append(row)
        letters.append(match.group(2))
    for letter in "xyz":
        if letters.count(letter) > 1:
            raise AxesError(f'"{text}" names the vessel axis {letter} twice: each of the '
                            "sensor's axes lies along a different vessel axis")
    third = np.cross(rows[0], rows[1])
    if len(rows) == 3 and not np.allclose(rows[2], third):
        fixed = _axes_text([rows[0], rows[1], third])
        raise AxesError(f'"{text}" is not right-handed (a mirror image: its z is the wrong way '
                        f'round); did you mean "{fixed}"?')
    return np.array([rows[0], rows[1], third])

"""The one document every report is built as, before any writer sees it.

A builder (:mod:`deviation.render.documents`) turns a result into a :class:`Document`: sections of
paragraphs, bullet lists, tables and charts, every figure already a :class:`Cell` with the text
all writers print, the number a spreadsheet holds, its decimals and its tone (within, over, not
used). The writers (terminal, xlsx, html, pdf, JSON) only lay the document out; none of them
computes a figure or decides a verdict, so two outputs cannot disagree.
"""

from __future__ import annotations

import enum
from collections.abc import Callable
from dataclasses import dataclass, field

from ..quantities import Status


class Tone(str, enum.Enum):
    """How a piece of text is shown: plain, good (within), bad (over), muted (a state the sensor
    is not relied on in), warn (a caution or a zone), strong (a heading)."""

    PLAIN = "plain"
    GOOD = "good"
    BAD = "bad"
    MUTED = "muted"
    WARN = "warn"
    STRONG = "strong"


#: The tone of each status.
TONE_OF = {Status.WITHIN: Tone.GOOD, Status.OVER: Tone.BAD, Status.OVERWHELMED: Tone.BAD,
           Status.NOT_USED: Tone.MUTED}


@dataclass(frozen=True)
class Cell:
    """One value of a table: the text every writer shows, and what a spreadsheet holds.

    ``value`` is the number (or text) itself; ``digits`` the decimals ``text`` shows, so a
    spreadsheet formats the number exactly as the text reads; ``prefix`` a mark shown before the
    number ("≤ " for an upper bound, "(" for a state not held...), ``suffix`` after it.
    """

    text: str
    value: float | int | str | None = None
    digits: int | None = None
    tone: Tone = Tone.PLAIN
    prefix: str = ""
    suffix: str = ""
    signed: bool = False             # "+" before a positive number, as a change is written

    @property
    def numeric(self) -> bool:
        return isinstance(self.value, (int, float)) and not isinstance(self.value, bool)


def cell(value, digits=None, *, tone=Tone.PLAIN, prefix="", suffix="", text=None,
         signed=False) -> Cell:
    """A cell for a number shown with ``digits`` decimals (or a text), never "-0.00";
    ``signed``: a positive number shown with "+" (a change)."""
    if value is None:
        return Cell(text if text is not None else "", None, None, tone)
    if isinstance(value, str):
        return Cell(text if text is not None else value, value, None, tone)
    if text is None:
        shown = f"{value:.{digits}f}" if digits is not None else f"{value:g}"
        if shown.startswith("-") and float(shown) == 0:
            shown = shown[1:]
        if float(shown) == 0:
            value = 0.0                   # a spreadsheet shows it as the text does: no "-0.00"
        elif signed and not shown.startswith("-"):
            shown = "+" + shown
        text = f"{prefix}{shown}{suffix}"
    return Cell(text, float(value), digits, tone, prefix, suffix, signed)


@dataclass(frozen=True)
class Column:
    """A table column: its heading, and whether it holds numbers (right-aligned, never broken)
    or text that may wrap between words (names)."""

    title: str
    numeric: bool = False
    wrap: bool = False


@dataclass(frozen=True)
class Table:
    """A table. ``sheet`` gives it a worksheet of its own in a workbook; ``pen`` lists the columns
    left blank to be filled in by hand on paper."""

    columns: tuple[Column, ...]
    rows: tuple[tuple[Cell, ...], ...]
    title: str = ""
    tone: Tone = Tone.PLAIN
    notes: tuple[str, ...] = ()
    sheet: str | None = None
    pen: tuple[int, ...] = ()


@dataclass(frozen=True)
class Paragraph:
    text: str
    tone: Tone = Tone.PLAIN
    indent: int = 0


@dataclass(frozen=True)
class Bullets:
    """A list; ``ordered``: the order matters (steps), so it is numbered."""

    items: tuple[str, ...]
    tone: Tone = Tone.PLAIN
    ordered: bool = False


@dataclass(frozen=True)
class Chart:
    """A picture: ``draw(fmt)`` returns its bytes as "png" or "svg" (the builder binds the data,
    the writer only chooses the format)."""

    alt: str
    draw: Callable[[str], bytes] = field(repr=False, compare=False)
    shrink: float = 0.5               # on paper: the least scale it may take to fit a page


Block = Paragraph | Bullets | Table | Chart


@dataclass(frozen=True)
class Section:
    """A titled part of a document.

    ``screen``: shown on the terminal (False for what only paper carries: charts, cards in a
    check report); ``detail``: on the terminal only with --detail; ``sheet``: a workbook starts
    a new worksheet of this name for it; ``new_page``: paper starts a new page for it;
    ``workbook``: False for what only paper and the html carry.
    """

    title: str
    blocks: tuple[Block, ...]
    tone: Tone = Tone.STRONG
    level: int = 2
    screen: bool = True
    detail: bool = False
    sheet: str | None = None
    new_page: bool = False
    workbook: bool = True             # False: paper and html only (a first page of particulars)


@dataclass(frozen=True)
class Document:
    """A whole report.

    kind : what it reports ("check", "card", ...), for file titles
    title : its heading
    meta : lines under the heading (the plan, the site, when and by what it was made)
    warnings : lines shown at once, before anything else (a blackout zone, example rows left)
    sections : the body
    recap : the verdict in a few lines, shown last on a terminal and first on paper
    cautions : what the figures cannot replace, on every report
    data : the machine-readable result, as ``--json`` prints it
    stamp : when and by what it was made, printed on paper only
    landscape : its tables are wide: paper prints it turned sideways
    paper : the sheet it prints on: "A4", "Letter" (an imperial plan's), "A5" or "A6"
    """

    kind: str
    title: str
    meta: tuple[str, ...]
    sections: tuple[Section, ...]
    cautions: tuple[str, ...]
    warnings: tuple[str, ...] = ()
    recap: tuple[Paragraph, ...] = ()
    data: dict = field(default_factory=dict, compare=False)
    stamp: str = ""                   # when and by what it was made (paper only)
    landscape: bool = False           # wide tables: paper turned sideways
    paper: str = "A4"                 # A4 or Letter (by the plan's units), A5 or A6 (a card)

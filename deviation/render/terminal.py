"""The deviation budget as rich tables in a terminal, or plain text when piped."""

from __future__ import annotations

import threading
import time
from dataclasses import replace

from rich import box
from rich.console import Console as _RichConsole
from rich.padding import Padding
from rich.segment import Segment
from rich.table import Table
from rich.text import Text

from ..text import terminal_text
from ..units import format_length
from .model import Bullets, Paragraph, Tone
from .model import Table as DocumentTable
from .words import CAUTIONS

#: Width of tables written to a file or a pipe, where no terminal says how wide it is.
PIPED_WIDTH = 120


class Console(_RichConsole):
    """A rich console that shows every control character of the text it prints as U+FFFD.

    Plan text (names, notes) may come from someone else; an escape sequence in it must not
    retitle the terminal, move the cursor or hide and forge lines. Only the text is cleaned:
    the console's own styles and cursor controls are written as rich makes them.
    """

    def _render_buffer(self, buffer):
        return super()._render_buffer(
            segment if segment.control else Segment(terminal_text(segment.text), segment.style)
            for segment in buffer)


def make_console(file=None, width=None):
    console = Console(file=file, width=width, highlight=False)
    if width is None and not console.is_terminal:
        console = Console(file=file, width=PIPED_WIDTH, highlight=False)
    return console


def _box(console):
    return box.SIMPLE_HEAVY if console.is_terminal else box.ASCII2


def render_site(site, console):
    """The site's field, one quantity a line."""
    side = "E" if site.declination_deg >= 0 else "W"
    when = site.date_text if not site.date_text.replace(".", "", 1).isdigit() else (
        f"{site.decimal_year:.2f} (decimal year)")
    console.print(Text(f"WMM2025 at {site.latitude_deg:.4f}°, {site.longitude_deg:.4f}°, "
                       f"{site.altitude_m:g} m, {when}"))
    lines = [("horizontal H", f"{site.horizontal_t * 1e6:9.3f} µT"),
             ("vertical Z", f"{site.vertical_t * 1e6:9.3f} µT (down positive)"),
             ("total F", f"{site.total_t * 1e6:9.3f} µT"),
             ("declination", f"{abs(site.declination_deg):9.2f}° {side} "
                             f"± {site.declination_uncertainty_deg:.2f}° "
                             f"({site.declination_change_deg_per_year:+.2f}°/year)"),
             ("inclination", f"{site.inclination_deg:9.2f}°"),
             ("zone", {"ok": "ok", "caution": "CAUTION: H below 6 µT, compasses degrade",
                       "blackout": "BLACKOUT: H below 2 µT, a magnetic compass is unreliable"}
              [site.zone])]
    for label, value in lines:
        console.print(Text(f"  {label:<14} {value}"))


#: How each tone looks on a terminal.
STYLE_OF = {Tone.PLAIN: "", Tone.GOOD: "green", Tone.BAD: "bold red", Tone.MUTED: "dim",
            Tone.WARN: "bold yellow", Tone.STRONG: "bold"}


def write_document(document, console, *, detail=False):
    """Print a document: its heading, warnings, the sections meant for a screen (those marked
    detail only with ``detail``), the cautions, and the verdict recapped in the last lines."""
    console.print(Text(document.title, style="bold"))
    for line in document.meta:
        console.print(Padding(Text(line), (0, 0, 0, 0)))
    for warning in document.warnings:
        console.print(Text(warning, style=STYLE_OF[Tone.WARN]))
    for section in document.sections:
        if not section.screen or (section.detail and not detail):
            continue
        console.print()
        style = STYLE_OF[section.tone] + (" underline" if section.level <= 2 else "")
        console.print(Text(section.title, style=style.strip()))
        for block in section.blocks:
            _write_block(block, console)
    console.print()
    console.print(Text("Cautions", style="bold"))
    _bullets(document.cautions, console)
    if document.recap:
        console.print()
        for paragraph in document.recap:
            _write_block(paragraph, console)


def _write_block(block, console):
    if isinstance(block, Paragraph):
        # Wrapped lines keep the paragraph's indent.
        console.print(Padding(Text(block.text, style=STYLE_OF[block.tone]),
                              (0, 0, 0, 2 * (block.indent + 1))))
    elif isinstance(block, Bullets):
        _bullets(block.items, console, STYLE_OF[block.tone], block.ordered)
    elif isinstance(block, DocumentTable):
        _table(block, console)
    # Charts are for paper.


def _bullets(items, console, style="", ordered=False):
    """Wrapped lines stay indented under their bullet (or number)."""
    grid = Table.grid(padding=(0, 1))
    grid.add_column(width=4 if ordered else 3, justify="right")
    grid.add_column()
    for i, item in enumerate(items, start=1):
        grid.add_row(f"{i}." if ordered else "•", Text(item, style=style))
    console.print(grid)


#: A column heading this short is never broken into lines.
SHORT_HEADING = 8
#: Widest a name may be before it is folded (a name longer than this is rare).
LONGEST_WORD = 30


def _column_min(block, c):
    """The least width of a column: its longest number (never broken), or its longest word."""
    column = block.columns[c]
    texts = [row[c].text for row in block.rows if c < len(row)]
    head = max((len(w) for w in column.title.split()), default=1)
    if len(column.title) <= SHORT_HEADING:           # "x mm", "A", "held °" stay on one line
        head = len(column.title)
    if column.numeric:
        return max([head] + [len(t) for t in texts])
    longest = max((len(w) for t in texts for w in t.split()), default=1)
    return min(max(head, longest), LONGEST_WORD)


def _chunks(block, width):
    """Columns in groups that each fit ``width`` with the first column repeated: a table too
    wide for the terminal is printed in parts, never with a number or a word cut. The parts are
    as even as the fewest parts allow."""
    mins = [_column_min(block, c) for c in range(len(block.columns))]

    def split(capacity):
        # A table is its columns, a space either side of each but the outer two, n + 1 rules.
        chunks, current, used = [], [0], mins[0] + 2
        for c in range(1, len(block.columns)):
            if used + mins[c] + 3 > capacity and len(current) > 1:
                chunks.append(current)
                current, used = [0], mins[0] + 2
            current.append(c)
            used += mins[c] + 3
        chunks.append(current)
        return chunks

    fewest = split(width)
    if len(fewest) == 1:
        return fewest, mins
    total = sum(m + 3 for m in mins[1:])
    capacity = mins[0] + 2 + total // len(fewest)
    while capacity < width and len(split(capacity)) > len(fewest):
        capacity += 1
    return split(min(capacity, width)), mins


def _on_screen(block):
    """The table without what a screen has no use for: columns left for a pen, and columns
    with nothing in them."""
    keep = [c for c in range(len(block.columns))
            if c not in block.pen and (not block.rows or any(row[c].text for row in block.rows))]
    if len(keep) == len(block.columns):
        return block
    return replace(block, columns=tuple(block.columns[c] for c in keep),
                   rows=tuple(tuple(row[c] for c in keep) for row in block.rows), pen=())


def _table(block, console):
    """A table whose numbers never break and whose names wrap only between words; too wide for
    the terminal, it is printed in parts, each with the first column."""
    block = _on_screen(block)
    if block.title:
        console.print(Text(block.title, style=STYLE_OF[block.tone]))
    chunks, mins = _chunks(block, console.width)
    for part, columns in enumerate(chunks):
        table = Table(box=_box(console), padding=(0, 1), pad_edge=False,
                      show_header=any(c.title for c in block.columns))
        for c in columns:
            column = block.columns[c]
            header = Text(column.title, overflow="fold")
            if column.numeric:
                table.add_column(header, justify="right", width=mins[c])
            else:
                table.add_column(header, min_width=mins[c], overflow="fold",
                                 ratio=1 if column.wrap else None)
        for row in block.rows:
            table.add_row(*(Text(row[c].text, style=STYLE_OF[row[c].tone],
                                 no_wrap=block.columns[c].numeric) for c in columns))
        if len(chunks) > 1:
            console.print(Text(f"  (part {part + 1} of {len(chunks)})", style="dim"))
        console.print(table)
    for note in block.notes:
        console.print(Padding(Text(note), (0, 0, 0, 2)))


class TerminalProgress:
    """Shows the library's progress (:mod:`deviation.progress`) as lines on stderr.

    Only on a terminal, only for a step still running after ``delay_s`` (one second), and the
    lines go away when the step ends: short commands, pipes, files and JSON never see one.
    """

    def __init__(self, enabled=True, delay_s=1.0, console=None):
        self.console = console or Console(stderr=True)
        self.enabled = enabled and self.console.is_terminal
        self.delay_s = delay_s
        self._lock = threading.Lock()
        self._progress = None
        self._shown = 0

    def start(self, label, total):
        if not self.enabled or total <= 0:
            return None
        return _TerminalStep(self, label, total)

    def _add(self, label, total, completed, started):
        with self._lock:
            if self._progress is None:
                from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn

                self._progress = Progress(TextColumn("{task.description}"), BarColumn(),
                                          MofNCompleteColumn(), _since_column(),
                                          console=self.console, transient=True)
                self._progress.start()
            self._shown += 1
            return self._progress.add_task(label, total=total, completed=completed,
                                           started=started)

    def _remove(self, task):
        with self._lock:
            progress = self._progress
            if progress is None:
                return
            progress.remove_task(task)
            self._shown -= 1
            if not self._shown:
                progress.stop()
                self._progress = None

    def _update(self, task, completed):
        with self._lock:
            if self._progress is not None:
                self._progress.update(task, completed=completed)

    def close(self):
        """Take every line away (a command ending, or interrupted)."""
        with self._lock:
            if self._progress is not None:
                self._progress.stop()
                self._progress = None
                self._shown = 0


def _since_column():
    """The time since the step began (not since its line appeared)."""
    from rich.progress import ProgressColumn

    class Since(ProgressColumn):
        def render(self, task):
            return Text(f"{time.monotonic() - task.fields['started']:.0f} s", style="dim")

    return Since()


class _TerminalStep:
    """One step: shown once it has run ``delay_s``; advanced; taken away when done."""

    def __init__(self, owner, label, total):
        self.owner, self.label, self.total = owner, label, total
        self.completed = 0
        self.started = time.monotonic()
        self.task = None
        self.finished = False
        self._lock = threading.Lock()
        self._timer = threading.Timer(owner.delay_s, self._show)
        self._timer.daemon = True
        self._timer.start()

    def _show(self):
        with self._lock:
            if not self.finished:
                self.task = self.owner._add(self.label, self.total, self.completed,
                                            self.started)

    def advance(self, n=1):
        with self._lock:
            self.completed += n
            if self.task is not None:
                self.owner._update(self.task, self.completed)

    def done(self):
        with self._lock:
            self.finished = True
            self._timer.cancel()
            if self.task is not None:
                self.owner._remove(self.task)
                self.task = None


def render_clearance(table, console, unit, source, notes, warning=None):
    """The clearance table: least distance per current, then what it assumes and the cautions.

    Parameters
    ----------
    table : deviation.physics.clearance.ClearanceTable
    console : rich Console
    unit : str
        Units of the distances printed ("m" or "ft").
    source : str
        Where the horizontal field came from, in words.
    notes : sequence of str
        What each column assumes, one sentence each.
    warning : str, optional
        The site's zone warning, if any.
    """
    console.print(Text(f"Least distance from a compass for a {table.budget_deg:g}° budget",
                       style="bold"))
    console.print(Text(f"H {table.horizontal_t * 1e6:.3f} µT ({source}); allowed disturbance "
                       f"H sin {table.budget_deg:g}° = {table.allowed_t * 1e6:.4f} µT"))
    if warning:
        console.print(Text(warning, style="bold red"))
    out = Table(box=_box(console))
    out.add_column("current A", justify="right")
    out.add_column("single conductor", justify="right")
    out.add_column(Text(f"pair at {format_length(table.spacing_m, unit)}"), justify="right")
    out.add_column(Text(f"twisted pair, {format_length(table.lay_m, unit)} lay"),
                   justify="right")
    for row in table:
        out.add_row(f"{row.current_a:g}", format_length(row.single_m, unit),
                    format_length(row.pair_m, unit), format_length(row.twisted_m, unit))
    console.print(out)

    def bullets(lines):              # wrapped lines stay indented under their bullet
        grid = Table.grid(padding=(0, 1))
        grid.add_column(width=3, justify="right")
        grid.add_column()
        for line in lines:
            grid.add_row("•", Text(line))
        console.print(grid)

    bullets(notes)
    console.print()
    console.print(Text("Cautions", style="bold"))
    bullets(CAUTIONS)


def _signed(deviation):
    side = "E" if deviation > 0.005 else "W" if deviation < -0.005 else " "
    return f"{abs(deviation):.2f}°{side}"

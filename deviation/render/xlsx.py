"""A document as a formatted workbook: numbers stay numbers, shown exactly as the other writers
print them, and every sheet prints on paper (landscape, fit to width, header rows repeated)."""

from __future__ import annotations

import re
from dataclasses import replace

from .model import Bullets, Chart, Paragraph, Table, Tone

#: Fonts present in both LibreOffice and Excel.
FONT = "Arial"

#: Colours of the tones (text, and the header fill).
COLOUR = {Tone.GOOD: "1B5E20", Tone.BAD: "B00020", Tone.MUTED: "777777", Tone.WARN: "9A5B00"}
HEADER_FILL = "DCE6F0"
#: Characters of 10-point text a column of the usual width holds (about 11), and the fewest
#: columns a long line wraps across.
CHARS_PER_COLUMN = 11
MIN_SPAN = 6
PEN_FILL = "FFFDE7"

#: Characters a worksheet cell cannot hold (XML 1.0 forbids them); shown as U+FFFD.
_ILLEGAL = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f]")


def sheet_name(name, taken):
    """A worksheet name Excel accepts (31 characters, none of []:*?/\\), unique."""
    clean = re.sub(r"[\[\]:*?/\\]", " ", _ILLEGAL.sub("", name)).strip() or "sheet"
    base = clean[:31]
    candidate, n = base, 2
    while candidate.lower() in taken:
        suffix = f" ({n})"
        candidate, n = base[:31 - len(suffix)] + suffix, n + 1
    taken.add(candidate.lower())
    return candidate


def number_format(cell) -> str | None:
    """The number format that shows a cell's number as its text reads."""
    if not cell.numeric:
        return None
    body = ("General" if cell.digits is None else "0" if cell.digits == 0
            else "0." + "0" * cell.digits)

    def literal(text):
        return f'"{text}"' if text else ""

    if cell.signed:                       # +1.20, -1.20, and zero unsigned
        return ";".join(f"{literal(cell.prefix)}{sign}{body}{literal(cell.suffix)}"
                        for sign in ("+", "-", ""))
    return f"{literal(cell.prefix)}{body}{literal(cell.suffix)}"


def workbook(document):
    """The document as an openpyxl Workbook (written by :func:`deviation.render.reports`)."""
    from openpyxl import Workbook
    from openpyxl.styles import Alignment, Border, Font, PatternFill, Side

    book = Workbook()
    taken: set[str] = set()
    thin = Side(style="thin", color="9AA5B1")
    box = Border(left=thin, right=thin, top=thin, bottom=thin)

    def font(tone=Tone.PLAIN, bold=False, size=10):
        colour = COLOUR.get(tone)
        return Font(name=FONT, size=size, bold=bold or tone in (Tone.BAD, Tone.STRONG),
                    italic=tone is Tone.MUTED, color=colour)

    state = {"sheet": book.active, "row": 1, "widths": {}, "paper": document.paper}
    state["sheet"].title = sheet_name(document.kind, taken)

    def put(column, value, *, tone=Tone.PLAIN, bold=False, size=10, fmt=None, wrap=False):
        sheet = state["sheet"]
        if isinstance(value, str):
            value = _ILLEGAL.sub("\ufffd", value)
        cell = sheet.cell(row=state["row"], column=column, value=value)
        if isinstance(value, str):
            cell.data_type = "s"                     # plan text stays text, never a formula
        cell.font = font(tone, bold, size)
        if fmt:
            cell.number_format = fmt
        if wrap:
            cell.alignment = Alignment(wrap_text=True, vertical="top")
        return cell

    def width(column, text):
        widths = state["widths"]
        widths[column] = max(widths.get(column, 8), min(60, len(str(text)) + 2))

    def new_sheet(name):
        _finish(state)
        state["sheet"] = book.create_sheet(sheet_name(name, taken))
        state["row"], state["widths"] = 1, {}

    def line(text, tone=Tone.PLAIN, bold=False, size=10):
        """A line of text; a long one wraps within the width of the section's tables (merged
        cells), so it never widens what prints."""
        span = state.get("span", 0)
        cell = put(1, text, tone=tone, bold=bold, size=size)
        capacity = span * CHARS_PER_COLUMN
        if span > 1 and len(str(text)) > capacity:
            sheet = state["sheet"]
            sheet.merge_cells(start_row=state["row"], start_column=1, end_row=state["row"],
                              end_column=span)
            cell.alignment = Alignment(wrap_text=True, vertical="top")
            lines = -(-len(str(text)) // capacity)
            sheet.row_dimensions[state["row"]].height = 13.5 * lines
        state["row"] += 1

    def table(block):
        if block.title:
            line(block.title, block.tone, bold=True)
        first = state["row"]
        headed = any(column.title for column in block.columns)
        for c, column in enumerate(block.columns if headed else (), start=1):
            cell = put(c, column.title, bold=True, wrap=True)
            cell.alignment = Alignment(wrap_text=True, vertical="top",
                                       horizontal="right" if column.numeric else "left")
            cell.fill = PatternFill("solid", fgColor=HEADER_FILL)
            cell.border = box
            width(c, column.title)
        sheet = state["sheet"]
        if headed and sheet.freeze_panes is None:  # the first table's header stays in view
            sheet.freeze_panes = f"A{first + 1}"
            sheet.print_title_rows = f"{first}:{first}"
        if headed:
            state["row"] += 1
        for values in block.rows:
            for c, value in enumerate(values, start=1):
                stored = value.value if value.numeric else value.text
                cell = put(c, stored, tone=value.tone, fmt=number_format(value))
                cell.border = box
                if c - 1 in block.pen:
                    cell.fill = PatternFill("solid", fgColor=PEN_FILL)
                width(c, value.text)
            state["row"] += 1
        for note in block.notes:
            line(note, Tone.MUTED)
        state["row"] += 1

    def heading():
        line(document.title, Tone.STRONG, size=14)
        for text in document.meta + ((document.stamp,) if document.stamp else ()):
            line(text)
        for warning in document.warnings:
            line(warning, Tone.WARN, bold=True)
        state["row"] += 1
        for paragraph in document.recap:
            line(("    " * paragraph.indent) + paragraph.text, paragraph.tone)
        state["row"] += 1

    # A workbook that opens on a sheet to fill in or read back (a table, header in row 1) keeps
    # its heading, notes and cautions on a last sheet; any other opens on its heading.
    opens_on_data = bool(document.sections) and is_data_sheet(document.sections[0])
    if not opens_on_data:
        heading()
    later: list[str] = []
    first = True
    for section in document.sections:
        if not section.workbook:
            continue
        if section.sheet and first:
            state["sheet"].title = sheet_name(section.sheet, taken - {document.kind})
        elif section.sheet:
            new_sheet(section.sheet)
        first = False
        if is_data_sheet(section):
            sheet = state["sheet"]
            sheet.oddHeader.center.text = f"{document.title}: {section.title}"
            block = section.blocks[0]
            if opens_on_data:         # its notes go to the last sheet, below nothing to read
                table(replace(block, notes=()))
                later += block.notes
            else:
                table(block)
            continue
        # Text wraps across the widest table of the section (at least a few columns).
        state["span"] = max([len(b.columns) for b in section.blocks if isinstance(b, Table)]
                            + [MIN_SPAN])
        line(section.title, section.tone, bold=True, size=12 if section.level <= 2 else 11)
        for block in section.blocks:
            if isinstance(block, Paragraph):
                line(("    " * block.indent) + block.text, block.tone)
            elif isinstance(block, Bullets):
                for i, item in enumerate(block.items, start=1):
                    line((f"{i}. " if block.ordered else "• ") + item, block.tone)
            elif isinstance(block, Table):
                table(block)
            elif isinstance(block, Chart):
                continue                              # pictures are in the html and pdf
        state["row"] += 1
    new_sheet("notes" if opens_on_data else "cautions")
    if opens_on_data:
        heading()
        for note in later:
            put(1, note, wrap=True)
            state["row"] += 1
        state["row"] += 1
    line("Cautions", Tone.STRONG, size=12)
    for caution in document.cautions:
        put(1, caution, wrap=True)
        state["row"] += 1
    state["widths"][1] = 110
    _finish(state)
    return book


def is_data_sheet(section) -> bool:
    """A worksheet holding one untitled table, its header in row 1 (a sheet to fill in, or one a
    program reads back)."""
    return bool(section.sheet and len(section.blocks) == 1
                and isinstance(section.blocks[0], Table) and not section.blocks[0].title)


def _finish(state):
    """Column widths and the print set-up of the sheet just written."""
    sheet = state["sheet"]
    for column, value in state["widths"].items():
        sheet.column_dimensions[sheet.cell(row=1, column=column).column_letter].width = value
    if 1 not in state["widths"]:
        sheet.column_dimensions["A"].width = 40
    sheet.page_setup.orientation = "landscape"
    sheet.page_setup.paperSize = (sheet.PAPERSIZE_LETTER if state.get("paper") == "Letter"
                                  else sheet.PAPERSIZE_A4)
    sheet.page_setup.fitToWidth = 1
    sheet.page_setup.fitToHeight = 0
    sheet.sheet_properties.pageSetUpPr.fitToPage = True
    sheet.oddFooter.center.text = "&P / &N"

"""A document as a PDF, with pip-installable libraries only: fpdf2 lays the pages out, the fonts
are the DejaVu faces matplotlib ships, and pictures go in as vectors (SVG read by fpdf2).

Page 1 carries the heading, the verdict and the first section; a section marked ``new_page``
starts a page of its own; a heading is never left alone at the foot of a page; tables repeat
their heading row on every page they run onto; every page is numbered ("page 2 of 7").
"""

from __future__ import annotations

import io
import logging
import os
import re

from .model import Bullets, Chart, Paragraph, Table, Tone

#: Colours of the tones (RGB).
COLOUR = {Tone.PLAIN: (26, 26, 26), Tone.GOOD: (27, 94, 32), Tone.BAD: (176, 0, 32),
          Tone.MUTED: (119, 119, 119), Tone.WARN: (138, 83, 0), Tone.STRONG: (26, 26, 26)}
HEADER_FILL = (228, 235, 243)
PEN_FILL = (255, 253, 231)
RULE = (51, 68, 85)
FONT = "DejaVu Sans"
#: Page margins [mm], and the least room a heading needs below it to stay with what follows.
MARGIN_MM = 14.0
KEEP_WITH_NEXT_MM = 28.0
#: Table font sizes tried, largest first, until a table's least widths fit the page.
TABLE_POINTS = (8.5, 7.5, 6.5, 5.8)


def _font_files():
    """The DejaVu Sans faces shipped with matplotlib (a dependency): regular, bold, oblique."""
    import matplotlib

    folder = os.path.join(os.path.dirname(matplotlib.__file__), "mpl-data", "fonts", "ttf")
    return {"": "DejaVuSans.ttf", "B": "DejaVuSans-Bold.ttf", "I": "DejaVuSans-Oblique.ttf",
            "BI": "DejaVuSans-BoldOblique.ttf"}, folder


def _svg_size_mm(svg):
    """The width and height an SVG asks for [mm] (mm, pt, px or bare user units)."""
    head = svg[:2000].decode("utf-8", "replace")
    sizes = []
    for name in ("width", "height"):
        match = re.search(rf'\b{name}="([\d.]+)\s*(mm|pt|px|in|cm)?"', head)
        if match is None:
            return None
        value, unit = float(match.group(1)), match.group(2) or "px"
        sizes.append(value * {"mm": 1.0, "cm": 10.0, "in": 25.4, "pt": 25.4 / 72,
                              "px": 25.4 / 96}[unit])
    return tuple(sizes)


def pdf_bytes(document) -> bytes:
    """The document as PDF bytes (see :mod:`deviation.render.model`)."""
    from fpdf import FPDF, FontFace

    logging.getLogger("fpdf.svg").setLevel(logging.ERROR)      # unsupported <metadata> tags
    faces, folder = _font_files()
    paper = {"a4": "A4", "letter": "Letter", "a5": "A5", "a6": "A6"}[document.paper.lower()]
    # ISO 216 sizes and US Letter [mm], portrait.
    size_mm = {"A4": (210.0, 297.0), "Letter": (215.9, 279.4), "A5": (148.0, 210.0),
               "A6": (105.0, 148.0)}[paper]
    footer_text = " · ".join(t for t in (document.title, document.meta[0] if document.meta
                                         else "") if t)

    class Pages(FPDF):
        def footer(self):
            self.set_y(-10)
            self.set_font(FONT, "", 7)
            self.set_text_color(*COLOUR[Tone.MUTED])
            self.cell(0, 4, footer_text[:110], align="L")
            self.set_x(self.l_margin)
            self.cell(0, 4, f"page {self.page_no()} of {{nb}}", align="R")

    pdf = Pages(orientation="L" if document.landscape else "P", unit="mm", format=size_mm)
    small = paper in ("A5", "A6")
    margin = 8.0 if small else MARGIN_MM
    pdf.set_margins(margin, margin, margin)
    pdf.set_auto_page_break(True, margin=margin + 4)
    for style, name in faces.items():
        pdf.add_font(FONT, style, os.path.join(folder, name))
    pdf.set_title(document.title)
    pdf.set_creator("deviation")
    pdf.add_page()
    width = pdf.epw

    def font(size, bold=False, italic=False, tone=Tone.PLAIN):
        pdf.set_font(FONT, ("B" if bold or tone in (Tone.BAD, Tone.STRONG) else "")
                     + ("I" if italic or tone is Tone.MUTED else ""), size)
        pdf.set_text_color(*COLOUR[tone])

    def room():
        return pdf.h - pdf.b_margin - pdf.get_y()

    def text(words, size=9.0, tone=Tone.PLAIN, indent=0.0, bold=False, height=None):
        if small:
            size *= 0.85
        font(size, bold=bold, tone=tone)
        pdf.set_x(pdf.l_margin + indent)
        pdf.multi_cell(width - indent, height or size * 0.48, words, new_x="LMARGIN",
                       new_y="NEXT")

    def heading(words, level, tone):
        if room() < KEEP_WITH_NEXT_MM:
            pdf.add_page()
        pdf.ln(3.0 if level <= 2 else 1.5)
        size = (12.0 if level <= 2 else 10.0) * (0.85 if small else 1.0)
        font(size, bold=True, tone=tone if tone is not Tone.PLAIN else Tone.STRONG)
        pdf.multi_cell(width, size * 0.47, words, new_x="LMARGIN", new_y="NEXT")
        if level <= 2:
            pdf.set_draw_color(*RULE)
            pdf.set_line_width(0.35)
            pdf.line(pdf.l_margin, pdf.get_y() + 0.3, pdf.l_margin + width, pdf.get_y() + 0.3)
            pdf.ln(1.6)

    def table(block):
        parts = _parts(block)
        if len(parts) > 1:
            for number, columns in enumerate(parts, start=1):
                part = Table(tuple(block.columns[c] for c in columns),
                             tuple(tuple(row[c] for c in columns) for row in block.rows),
                             f"{block.title} (part {number} of {len(parts)})".strip(),
                             block.tone, block.notes if number == len(parts) else (),
                             pen=tuple(i for i, c in enumerate(columns) if c in block.pen))
                table(part)
            return
        if block.title:
            if room() < KEEP_WITH_NEXT_MM / 2:
                pdf.add_page()
            text(block.title, 8.5, block.tone, bold=True)
        chosen: float = TABLE_POINTS[-1]        # the loop always chooses: its last size fits by fiat
        widths: list[float] = []
        for points in TABLE_POINTS[1:] if small else TABLE_POINTS:
            font(points)
            pad = 2.2
            least, natural = [], []
            for c, column in enumerate(block.columns):
                cells = [row[c].text for row in block.rows if c < len(row)]
                head_words = column.title.split() or [""]
                pdf.set_font(FONT, "B", points)
                head_least = max(pdf.get_string_width(w) for w in head_words)
                head_all = pdf.get_string_width(column.title)
                pdf.set_font(FONT, "", points)
                if c in block.pen:
                    least.append(max(head_least, 16.0) + pad)
                    natural.append(max(head_all, 22.0) + pad)
                elif column.numeric:
                    widest = max([pdf.get_string_width(t) for t in cells] + [0.0])
                    least.append(max(widest, head_least) + pad)
                    natural.append(max(widest, head_all) + pad)
                else:
                    longest = max([pdf.get_string_width(w) for t in cells for w in t.split()]
                                  + [0.0])
                    whole = max([pdf.get_string_width(t) for t in cells] + [0.0])
                    least.append(max(longest, head_least) + pad)
                    natural.append(max(whole, head_all) + pad)
            if sum(least) <= width or points == TABLE_POINTS[-1]:
                chosen = points
                spare = width - sum(least)
                grow = [n - m for n, m in zip(natural, least)]
                total = sum(grow)
                factor = 0.0 if total <= 0 else min(1.0, max(0.0, spare) / total)
                widths = [m + g * factor for m, g in zip(least, grow)]
                break
        font(chosen)
        aligns = tuple("RIGHT" if column.numeric else "LEFT" for column in block.columns)
        heading_style = FontFace(emphasis="BOLD", fill_color=HEADER_FILL, size_pt=chosen)
        total = sum(widths)
        if total > width - 0.01:                   # rounding: never wider than the page
            widths = [w * (width - 0.01) / total for w in widths]
        headed = any(column.title for column in block.columns)
        with pdf.table(col_widths=tuple(widths), width=sum(widths), align="LEFT",
                       first_row_as_headings=headed,
                       text_align=aligns, headings_style=heading_style,
                       line_height=chosen * (0.4 if small else 0.5),
                       padding=0.35 if small else 0.7, repeat_headings=1,
                       borders_layout="SINGLE_TOP_LINE" if not block.pen else "ALL",
                       cell_fill_mode="NONE") as grid:
            if headed:
                row = grid.row()
                for column in block.columns:
                    row.cell(column.title)
            for values in block.rows:
                row = grid.row()
                for c, value in enumerate(values):
                    if c in block.pen:
                        row.cell("", style=FontFace(fill_color=PEN_FILL))
                        continue
                    tone = value.tone
                    row.cell(value.text, style=FontFace(
                        color=COLOUR[tone], size_pt=chosen,
                        emphasis=("BOLD" if tone in (Tone.BAD, Tone.STRONG) else "")
                        + ("ITALICS" if tone is Tone.MUTED else "") or None))
        for note in block.notes:
            text(note, 7.5, Tone.MUTED)
        pdf.ln(1.5)

    def least_widths(block, points):
        pad = 2.2
        out = []
        for c, column in enumerate(block.columns):
            pdf.set_font(FONT, "B", points)
            head = max(pdf.get_string_width(w) for w in column.title.split() or [""])
            pdf.set_font(FONT, "", points)
            cells = [row[c].text for row in block.rows if c < len(row)]
            if c in block.pen:
                out.append(max(head, 16.0) + pad)
            elif column.numeric:
                out.append(max([pdf.get_string_width(t) for t in cells] + [head]) + pad)
            else:
                out.append(max([pdf.get_string_width(w) for t in cells for w in t.split()]
                               + [head]) + pad)
        return out

    def _parts(block):
        """Columns in groups that fit the page at the smallest type, the first repeated."""
        least = least_widths(block, TABLE_POINTS[-1])
        parts, current, used = [], [0], least[0]
        for c in range(1, len(block.columns)):
            if used + least[c] > width and len(current) > 1:
                parts.append(current)
                current, used = [0], least[0]
            current.append(c)
            used += least[c]
        parts.append(current)
        return parts

    def chart(block):
        svg = block.draw("svg")
        size = _svg_size_mm(svg) or (width, width * 0.6)
        w = min(width, size[0])
        h = w * size[1] / size[0]
        usable = pdf.h - pdf.t_margin - pdf.b_margin - 4
        if h > usable:
            w, h = w * usable / h, usable
        if h > room():
            # Shrink to the room left when that keeps enough of its size, else turn over.
            if room() >= block.shrink * h:
                w, h = w * room() / h, room()
            else:
                pdf.add_page()
        pdf.image(io.BytesIO(svg), x=pdf.l_margin + (width - w) / 2, y=pdf.get_y(), w=w, h=h)
        pdf.set_y(pdf.get_y() + h + 2)

    def block_out(block):
        if isinstance(block, Paragraph):
            text(block.text, 9.0, block.tone, indent=5.0 * block.indent)
            pdf.ln(0.8)
        elif isinstance(block, Bullets):
            for i, item in enumerate(block.items, start=1):
                font(9.0, tone=block.tone)
                pdf.set_x(pdf.l_margin + 2)
                pdf.cell(6, 4.4, f"{i}." if block.ordered else "•")
                pdf.multi_cell(width - 8, 4.4, item, new_x="LMARGIN", new_y="NEXT")
            pdf.ln(0.8)
        elif isinstance(block, Table):
            table(block)
        elif isinstance(block, Chart):
            chart(block)

    # The heading, the verdict and the sections.
    text(document.title, 15.0 if not small else 12.0, Tone.STRONG, bold=True, height=7.0)
    for line in document.meta + ((document.stamp,) if document.stamp and not small else ()):
        text(line, 7.8, Tone.MUTED)
    for line in document.warnings:
        text(line, 9.0, Tone.WARN, bold=True)
    if document.recap:
        pdf.ln(1.5)
        top = pdf.get_y()
        for paragraph in document.recap:
            text(paragraph.text, 9.5, paragraph.tone, indent=2 + 5.0 * paragraph.indent)
        pdf.set_draw_color(*RULE)
        pdf.set_line_width(0.4)
        pdf.rect(pdf.l_margin, top - 1.2, width, pdf.get_y() - top + 2.4)
        pdf.ln(3.0)
    first = True
    for section in document.sections:
        if section.new_page and not first:
            pdf.add_page()
        first = False
        heading(section.title, section.level, section.tone)
        for block in section.blocks:
            block_out(block)
    if document.cautions:
        heading("Cautions", 2, Tone.STRONG)
        for caution in document.cautions:
            text("• " + caution, 8.0)
    return bytes(pdf.output())

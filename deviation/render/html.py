"""A document as one self-contained html page (styles and vector pictures inline) that reads on
a phone and prints on A4 with page numbers."""

from __future__ import annotations

import html

from .model import Bullets, Chart, Paragraph, Table, Tone

STYLE = """
body { font: 10.5pt/1.4 system-ui, -apple-system, "Segoe UI", Roboto, Arial, sans-serif;
       color: #1a1a1a; max-width: 190mm; margin: 12mm auto; padding: 0 3mm; }
h1 { font-size: 17pt; margin: 0 0 2mm; }
h2 { font-size: 13pt; margin: 8mm 0 2mm; border-bottom: 1.5px solid #345; }
h3 { font-size: 11pt; margin: 5mm 0 1.5mm; }
h2, h3, .caption { break-after: avoid; page-break-after: avoid; }
.scroll { overflow-x: auto; }
table { border-collapse: collapse; width: 100%; margin: 1mm 0 2mm; font-size: 9pt; }
th, td { border: 1px solid #c8ced6; padding: 1.2mm 1.8mm; vertical-align: top; }
th { background: #e4ebf3; text-align: left; } th.num, td.num { text-align: right;
     white-space: nowrap; }
td.pen { background: #fffde7; min-width: 18mm; height: 7mm; }
.good { color: #1b5e20; } .bad { color: #b00020; font-weight: 700; }
.muted { color: #777; font-style: italic; } .warn { color: #8a5300; font-weight: 700; }
.strong { font-weight: 700; } td.long, .meta { overflow-wrap: anywhere; }
.meta, .note { color: #555; font-size: 9pt; margin: 0.5mm 0; }
.caption { font-weight: 600; margin: 3mm 0 1mm; }
.recap { border: 1.5px solid #345; padding: 2mm 4mm; margin: 4mm 0; }
.recap p { margin: 0.5mm 0; } .indent1 { margin-left: 5mm; }
.caution { border: 1.5px solid #b26a00; background: #fff8ec; padding: 2mm 4mm; margin: 4mm 0; }
figure { margin: 2mm 0; text-align: center; } figure svg { max-width: 100%; height: auto; }
section.page { break-before: page; page-break-before: always; }
table, figure, .caution, .recap, .keep { break-inside: avoid; }
@media print { body { margin: 0 auto; max-width: none; } a { color: inherit; } }
@media (max-width: 640px) {
  body { font-size: 10pt; margin: 3mm auto; padding: 0 2mm; }
  table { font-size: 8pt; } th, td { padding: 0.8mm 1mm; }
  th, th.num { white-space: normal; } h1 { font-size: 14pt; }
}
"""

#: The page rule by paper, and the page numbers in its bottom margin.
PAGE = """
@page {{ size: {size}; margin: {margin}; @bottom-right {{ content: "page " counter(page) " of "
        counter(pages); font: 8pt system-ui, Arial, sans-serif; color: #666; }}
        @bottom-left {{ content: "{footer}"; font: 8pt system-ui, Arial, sans-serif;
        color: #666; }} }}
"""


def _e(value):
    return html.escape("" if value is None else str(value), quote=True)


def _class(tone):
    return "" if tone is Tone.PLAIN else tone.value


def _svg(chart):
    """The chart as inline SVG (vector: crisp on paper), without its XML prologue."""
    text = chart.draw("svg").decode("utf-8")
    start = text.find("<svg")
    return f'<figure role="img" aria-label="{_e(chart.alt)}">{text[start:]}</figure>'


def _table(block):
    parts = []
    if block.title:
        parts.append(f"<p class='caption {_class(block.tone)}'>{_e(block.title)}</p>")
    parts.append("<div class=scroll><table>")
    if any(column.title for column in block.columns):        # a list of particulars has none
        parts.append("<thead><tr>")
        for column in block.columns:
            parts.append(f"<th class={'num' if column.numeric else 'text'}>"
                         f"{_e(column.title)}</th>")
        parts.append("</tr></thead>")
    parts.append("<tbody>")
    for row in block.rows:
        cells = []
        for c, value in enumerate(row):
            kinds = ["pen" if c in block.pen else
                     "num" if block.columns[c].numeric else "text", _class(value.tone),
                     # A long unbroken token (a digest) may break anywhere on a narrow screen.
                     "long" if any(len(w) > 30 for w in value.text.split()) else ""]
            cells.append(f"<td class='{' '.join(k for k in kinds if k)}'>{_e(value.text)}</td>")
        parts.append("<tr>" + "".join(cells) + "</tr>")
    parts.append("</tbody></table></div>")
    parts += [f"<p class=note>{_e(note)}</p>" for note in block.notes]
    return "".join(parts)


def _block(block):
    if isinstance(block, Paragraph):
        return f"<p class='{_class(block.tone)} indent{block.indent}'>{_e(block.text)}</p>"
    if isinstance(block, Bullets):
        tag = "ol" if block.ordered else "ul"
        return (f"<{tag} class='{_class(block.tone)}'>"
                + "".join(f"<li>{_e(item)}</li>" for item in block.items) + f"</{tag}>")
    if isinstance(block, Table):
        return _table(block)
    if isinstance(block, Chart):
        return _svg(block)
    raise TypeError(f"not a block: {block!r}")


def _page_rule(document):
    size = document.paper + (" landscape" if document.landscape else "")
    small = document.paper in ("A5", "A6")
    footer = (document.title + (" · " + document.meta[0] if document.meta else "")).replace(
        "\\", "\\\\").replace('"', '\\"')
    rule = PAGE.format(size=size, margin="8mm 8mm 12mm" if small else "12mm 12mm 16mm",
                       footer=html.escape(footer[:90], quote=False))
    if document.landscape:
        rule += "body { max-width: 270mm; }"
    if small:
        rule += "body { max-width: 130mm; font-size: 9.5pt; }"
    return rule


def page(document) -> str:
    """The document as one html page: the verdict first, then every section."""
    parts = ["<!doctype html><html lang=en><head><meta charset=utf-8>"
             "<meta name=viewport content='width=device-width, initial-scale=1'>"
             f"<title>{_e(document.title)}: {_e(document.meta[0] if document.meta else '')}"
             f"</title><style>{STYLE}{_page_rule(document)}</style></head><body>",
             f"<h1>{_e(document.title)}</h1>"]
    parts += [f"<p class=meta>{_e(line)}</p>" for line in document.meta]
    if document.stamp:
        parts.append(f"<p class=meta>{_e(document.stamp)}</p>")
    parts += [f"<p class=warn>{_e(line)}</p>" for line in document.warnings]
    if document.recap:
        parts.append("<div class=recap>" + "".join(_block(p) for p in document.recap)
                     + "</div>")
    if document.cautions:
        parts.append("<div class=caution><b>Cautions.</b> "
                     + " ".join(_e(c) for c in document.cautions) + "</div>")
    for section in document.sections:
        level = min(3, max(2, section.level))
        # The heading and what follows it stay on one page: never a heading alone at the foot.
        blocks = [_block(block) for block in section.blocks]
        parts.append(f"<section class='{'page' if section.new_page else ''}'><div class=keep>"
                     f"<h{level} class='{_class(section.tone)}'>{_e(section.title)}</h{level}>"
                     + (blocks[0] if blocks else "") + "</div>")
        parts += blocks[1:]
        parts.append("</section>")
    if document.cautions:
        parts.append("<h2>Cautions</h2><ul>" + "".join(f"<li>{_e(c)}</li>"
                                                       for c in document.cautions) + "</ul>")
    parts.append("</body></html>")
    return "".join(parts)

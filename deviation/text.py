"""Text that is text: what plan text may carry into a terminal, a CSV file or a workbook.

A plan may come from someone else. Its names and notes reach the terminal, CSV files a
spreadsheet opens and xlsx workbooks, and each of those would act on some characters:

- a terminal obeys control characters and escape sequences (retitle the window, move the cursor,
  hide or overwrite lines), and bidirectional overrides reorder what it shows;
- a spreadsheet runs a CSV cell that starts with ``=``, ``+``, ``-`` or ``@`` (and, in some,
  a tab, a carriage return or NUL first) as a formula;
- an xlsx workbook (XML 1.0) cannot hold most C0 control characters at all.

These functions make each kind of text inert; the renderers call them at their edge.
"""

from __future__ import annotations

import re

#: Shown in place of a character a terminal or a workbook would act on.
REPLACEMENT = "\ufffd"

#: C0 controls but newline and tab, DEL, C1 controls (0x9B is a one-character CSI to some
#: terminals), and the bidirectional embeddings, overrides and isolates (Unicode Standard
#: Annex #9), which can make a line read as something else.
_TERMINAL_UNSAFE = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u202a-\u202e\u2066-\u2069]")

#: What JSON (RFC 8259) leaves unescaped that a terminal would still act on: DEL, C1 controls,
#: the bidirectional controls, and the line and paragraph separators.
_JSON_UNSAFE = re.compile("[\x7f-\x9f\u2028\u2029\u202a-\u202e\u2066-\u2069]")

#: Characters XML 1.0 forbids (openpyxl's IllegalCharacterError): C0 controls but tab,
#: newline and carriage return.
_XML_ILLEGAL = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f]")

#: A cell a spreadsheet would run as a formula when it starts with one of these: OWASP, "CSV
#: Injection" (https://owasp.org/www-community/attacks/CSV_Injection): =, +, -, @, tab (0x09)
#: and carriage return (0x0D); OWASP ASVS 5.0 requirement 1.2.10 adds NUL; CWE-1236.
CSV_FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r", "\0")

#: A plain decimal number, which a spreadsheet reads as a number and never as a formula.
_NUMBER = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?")


def terminal_text(text: str) -> str:
    """``text`` with every control character, escape and bidirectional override replaced by
    U+FFFD (newlines and tabs kept), so it cannot act on the terminal that shows it."""
    return _TERMINAL_UNSAFE.sub(REPLACEMENT, text)


def json_text(dumped: str) -> str:
    """JSON text (from ``json.dumps(..., ensure_ascii=False)``) with the characters JSON leaves
    raw but a terminal acts on written as ``\\uXXXX`` escapes: the same JSON to a parser."""
    return _JSON_UNSAFE.sub(lambda m: f"\\u{ord(m.group()):04x}", dumped)


def csv_cell(value):
    """A cell for a CSV file a spreadsheet may open: text that starts like a formula gets a
    leading ``'`` (OWASP's remedy; the spreadsheet shows the text, the quote hidden); numbers,
    and text that is a plain number (``-1.25``), are left as they are."""
    if not isinstance(value, str) or not value.startswith(CSV_FORMULA_STARTS):
        return value
    if _NUMBER.fullmatch(value):
        return value
    return "'" + value


def xlsx_value(value):
    """A value an xlsx cell can hold: text with the characters XML 1.0 forbids replaced by
    U+FFFD (openpyxl would raise IllegalCharacterError); anything else unchanged."""
    if isinstance(value, str):
        return _XML_ILLEGAL.sub(REPLACEMENT, value)
    return value

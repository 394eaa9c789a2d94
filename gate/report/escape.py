"""Escaping of untrusted text (slice values, check names, notes, file names) for reports.

Three functions, each safe on any ``str``:

- :func:`one_line` makes control, format and line-break characters visible as backslash escapes
  (``\\n``, ``\\x1b``, ``\\u202e``), so a value can never start a new line or hide behind a
  direction override, and two values that differ only in such characters still look different.
- :func:`escape_markdown` returns inline markdown that renders as the literal text: it cannot
  split a table cell, open HTML, a link, an image, a code span, emphasis or math, nor begin a
  heading, list, quote or code block when placed at the start of a line.
- :func:`xml_safe` removes the characters XML 1.0 forbids; markup characters (``<``, ``&``) are
  left to :mod:`xml.etree`, which escapes them when it serialises.
"""

from __future__ import annotations

import re
import unicodedata

__all__ = ["escape_markdown", "one_line", "xml_safe"]

# Categories shown as escapes by one_line: controls (Cc, includes \n \r \t), format characters
# (Cf: bidi overrides, zero-width joiners), surrogates (Cs) and the Unicode line/paragraph
# separators (Zl, Zp).
_INVISIBLE_CATEGORIES = frozenset({"Cc", "Cf", "Cs", "Zl", "Zp"})
_SHORT_ESCAPES = {"\t": "\\t", "\n": "\\n", "\r": "\\r"}


def _is_noncharacter(code: int) -> bool:
    return 0xFDD0 <= code <= 0xFDEF or (code & 0xFFFE) == 0xFFFE


def _visible(ch: str) -> str:
    if ch in _SHORT_ESCAPES:
        return _SHORT_ESCAPES[ch]
    code = ord(ch)
    if code < 0x100:
        return f"\\x{code:02x}"
    if code < 0x10000:
        return f"\\u{code:04x}"
    return f"\\U{code:08x}"


def one_line(text: str) -> str:
    """Return ``text`` with every invisible or line-breaking character written as an escape.

    Control characters (including newline, carriage return and tab), Unicode format characters
    (bidi overrides, zero-width characters), lone surrogates, line/paragraph separators and
    noncharacters become ``\\n``, ``\\t``, ``\\xNN``, ``\\uNNNN`` or ``\\UNNNNNNNN``, like
    Python's ``repr``. Everything else is unchanged. The backslash itself is not escaped here.

    Example: ``one_line("north\\nsouth")`` is the 12-character text ``north\\nsouth``.
    """
    text = str(text)
    if text.isprintable():  # fast path: nothing to show (isprintable is False for all the above)
        return text
    out = []
    for ch in text:
        if unicodedata.category(ch) in _INVISIBLE_CATEGORIES or _is_noncharacter(ord(ch)):
            out.append(_visible(ch))
        else:
            out.append(ch)
    return "".join(out)


# Characters backslash-escaped wherever they occur. CommonMark (GitHub, GitLab, our HTML page)
# lets any ASCII punctuation be backslash-escaped; these are the ones that start inline syntax:
# \ (escapes), ` (code spans), * _ (emphasis), ~ (strikethrough), [ ] (links and images),
# | (table cells), # (headings; kept escaped inside text too), $ (math on some hosts),
# < (raw HTML, comments, autolinks) and & (entity references). With every "<" escaped a ">"
# can close nothing, so it is escaped only where it would open a block quote.
_BACKSLASHED = frozenset("\\`*_~[]|#$<&")
# Block syntax that only matters at the start of a line: list bullets, block quote, setext
# underline, ordered-list markers ("1." / "1)").
_LEADING_MARKER = re.compile(r"^([-+=>])|^([0-9]{1,9})([.)])")
_NBSP = "\u00a0"


def escape_markdown(text: str, *, max_length: int | None = None) -> str:
    """Return markdown that renders as the literal ``text``, on one line.

    Parameters
    ----------
    text : the untrusted text (a slice value, a check name, a note, a file name).
    max_length : if given, texts longer than this many characters are cut and end in ``...``
        (before escaping, so an escape is never cut in half). Must be at least 4.

    Returns
    -------
    str
        Inline markdown, safe inside a GFM table cell and at the start of a line.

    Notes
    -----
    Invisible characters are first made visible by :func:`one_line`. Then
    ``\\ ` * _ ~ [ ] | # $ < &`` are backslash-escaped (except ``_`` between two letters or
    digits, as in ``recall_at_fpr``, where CommonMark cannot read it as emphasis), a leading
    ``-``, ``+``, ``=``, ``>`` or ordered-list marker is escaped, and leading spaces become no-break
    spaces so they cannot open an indented code block. Backslash escapes rather than HTML
    entities, because GFM renders both alike while a renderer that shows markup as text (our HTML
    page) would print an entity literally. Bare URLs may still be turned into links by hosts
    that autolink them; the link text is then the URL itself, so nothing is hidden.

    Example: ``escape_markdown("a|b")`` is ``a\\|b``; ``escape_markdown("<b>")`` is ``\\<b>``.
    """
    text = str(text)
    if max_length is not None:
        if max_length < 4:
            raise ValueError(f"max_length must be at least 4, got {max_length}")
        if len(text) > max_length:
            text = text[: max_length - 3] + "..."
    text = one_line(text)
    out = []
    last = len(text) - 1
    for i, ch in enumerate(text):
        if ch == "_" and 0 < i < last and text[i - 1].isalnum() and text[i + 1].isalnum():
            out.append(ch)  # intraword: CommonMark never opens or closes emphasis here
        elif ch in _BACKSLASHED:
            out.append("\\" + ch)
        else:
            out.append(ch)
    escaped = "".join(out)
    stripped = escaped.lstrip(" ")
    if len(stripped) != len(escaped):
        escaped = _NBSP * (len(escaped) - len(stripped)) + stripped
    else:
        match = _LEADING_MARKER.match(escaped)
        if match is not None:
            if match.group(1) is not None:
                escaped = "\\" + escaped
            else:
                digits = match.group(2)
                escaped = digits + "\\" + escaped[len(digits) :]
    return escaped


# XML 1.0 Char production: #x9 | #xA | #xD | [#x20-#xD7FF] | [#xE000-#xFFFD] | [#x10000-#x10FFFF].
_XML_FORBIDDEN = re.compile("[^\t\n\r\u0020-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]")


def xml_safe(text: str) -> str:
    """Return ``text`` without the characters XML 1.0 forbids.

    Removed: C0 controls other than tab, newline and carriage return; lone surrogates;
    U+FFFE and U+FFFF. Markup characters are kept: :mod:`xml.etree` escapes ``&``, ``<`` and
    ``>`` (and quotes in attributes) when it serialises. Pass labels through :func:`one_line`
    first where a removed character should stay visible.

    Example: ``xml_safe("a\\x00b")`` is ``ab``.
    """
    return _XML_FORBIDDEN.sub("", str(text))

"""Escaping of untrusted text: gate/report/escape.py.

The outside reference for markdown is markdown-it-py (a CommonMark-compliant parser with GFM
tables; it is installed with typer through rich): escaped text must parse as one paragraph,
or one table cell, of plain text equal to the input. For XML it is the standard library's
ElementTree parser.
"""

from __future__ import annotations

import functools
import unicodedata
import xml.etree.ElementTree as ET

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from gate.report.escape import escape_markdown, one_line, xml_safe
from tests.fixtures_results import HOSTILE_VALUES

markdown_it = pytest.importorskip("markdown_it")

# Characters with a meaning in markdown, HTML or XML, plus line breaks, to bias the generator.
SPECIALS = list("|`*_~[]()#$<>&!\\-+=.:/@ 0123456789\n\r\tab") + ["\x00", "\u202e", "\u2028", "\ufffe"]
TEXTS = st.text(st.sampled_from(SPECIALS) | st.characters(), max_size=40)


@functools.cache
def parser() -> markdown_it.MarkdownIt:
    # html=True: raw HTML would come through as html tokens, so the test can see it.
    return markdown_it.MarkdownIt("commonmark", {"html": True}).enable(["table", "strikethrough"])


def inline_text(token) -> str:
    """The text an inline token renders to; fails on any markup (links, code, emphasis, HTML)."""
    kinds = {child.type for child in token.children}
    assert kinds <= {"text", "text_special"}, kinds
    return "".join(child.content for child in token.children)


def rendered_as_paragraph(markdown: str) -> str:
    tokens = parser().parse(markdown)
    assert [t.type for t in tokens] == ["paragraph_open", "inline", "paragraph_close"], markdown
    return inline_text(tokens[1])


def rendered_as_cell(markdown: str) -> list[str]:
    tokens = parser().parse(f"| head | other |\n| --- | --- |\n| {markdown} | x |\n")
    cells = [t for i, t in enumerate(tokens) if t.type == "inline" and tokens[i - 1].type == "td_open"]
    return [inline_text(t) for t in cells]


# --- one_line -------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("north", "north"),
        ("Zürich-Süd", "Zürich-Süd"),  # printable non-ASCII unchanged
        ("a\nb", "a\\nb"),
        ("a\r\nb\tc", "a\\r\\nb\\tc"),
        ("nul\x00esc\x1b", "nul\\x00esc\\x1b"),
        ("rtl\u202eevil", "rtl\\u202eevil"),  # bidi override (Cf)
        ("line\u2028sep", "line\\u2028sep"),  # line separator (Zl)
        ("lone\ud800", "lone\\ud800"),  # surrogate (Cs)
        ("non\ufffechar", "non\\ufffechar"),  # noncharacter
        ("tag\U000e0041", "tag\\U000e0041"),  # tag character (Cf, astral)
        ("back\\slash", "back\\slash"),  # backslash itself untouched
    ],
)
def test_one_line(text: str, expected: str) -> None:
    assert one_line(text) == expected


@given(TEXTS)
def test_one_line_leaves_no_line_breaks_or_invisibles(text: str) -> None:
    out = one_line(text)
    assert not any(unicodedata.category(ch) in {"Cc", "Cf", "Cs", "Zl", "Zp"} for ch in out)
    assert len(out.splitlines()) <= 1


# --- escape_markdown --------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("a|b", "a\\|b"),
        ("<b>", "\\<b>"),
        ("> quote", "\\> quote"),
        ("a >= b", "a >= b"),
        ("&amp;", "\\&amp;"),
        ("`x`", "\\`x\\`"),
        ("[a](http://x)", "\\[a\\](http://x)"),
        ("# h", "\\# h"),
        ("- item", "\\- item"),
        ("+ item", "\\+ item"),
        ("12) item", "12\\) item"),
        ("3. item", "3\\. item"),
        ("recall_at_fpr", "recall_at_fpr"),  # intraword underscore needs no escape
        ("_em_", "\\_em\\_"),
        ("north-east", "north-east"),  # hyphen only matters at the start
        ("a\nb", "a\\\\nb"),  # made visible by one_line, then its backslash escaped
    ],
)
def test_escape_markdown_examples(text: str, expected: str) -> None:
    assert escape_markdown(text) == expected


@pytest.mark.parametrize("value", HOSTILE_VALUES)
def test_hostile_value_renders_as_its_literal_text(value: str) -> None:
    escaped = escape_markdown(value)
    assert "\n" not in escaped and "\r" not in escaped
    assert rendered_as_paragraph(escaped).strip() == one_line(value).strip()


@pytest.mark.parametrize("value", HOSTILE_VALUES)
def test_hostile_value_stays_in_its_table_cell(value: str) -> None:
    cells = rendered_as_cell(escape_markdown(value))
    assert cells == [one_line(value).strip(), "x"]


@settings(max_examples=150, deadline=None)
@given(TEXTS)
def test_any_text_renders_as_one_plain_paragraph(text: str) -> None:
    # Paragraph and cell content lose surrounding whitespace in markdown; that is all that may differ.
    expected = one_line(text).strip()
    if not expected:
        return
    assert rendered_as_paragraph(escape_markdown(text)).strip() == expected


@settings(max_examples=100, deadline=None)
@given(TEXTS)
def test_any_text_stays_in_one_table_cell(text: str) -> None:
    expected = one_line(text).strip()
    assert rendered_as_cell(escape_markdown(text)) == [expected, "x"]


def rendered_as_list_item(markdown: str) -> str:
    tokens = parser().parse(f"- {markdown}\n")
    assert [t.type for t in tokens] == [
        "bullet_list_open", "list_item_open", "paragraph_open", "inline", "paragraph_close",
        "list_item_close", "bullet_list_close",
    ], markdown
    return inline_text(tokens[3])


@pytest.mark.parametrize("value", HOSTILE_VALUES)
def test_hostile_value_stays_plain_inside_a_list_item(value: str) -> None:
    # Reports list warnings as "- text": a value must not nest a list, quote or heading there.
    assert rendered_as_list_item(escape_markdown(value)).strip() == one_line(value).strip()


@settings(max_examples=100, deadline=None)
@given(TEXTS)
def test_any_text_stays_plain_inside_a_list_item(text: str) -> None:
    expected = one_line(text).strip()
    if not expected:
        return
    assert rendered_as_list_item(escape_markdown(text)).strip() == expected


def test_leading_spaces_cannot_open_a_code_block() -> None:
    escaped = escape_markdown("    indented code")
    assert rendered_as_paragraph(escaped).strip() == "indented code"


def test_max_length_cuts_before_escaping() -> None:
    assert escape_markdown("x" * 10, max_length=8) == "xxxxx..."
    # The cut never splits an escape: a value of pipes keeps every pipe escaped.
    assert escape_markdown("|" * 10, max_length=8) == "\\|" * 5 + "..."
    assert escape_markdown("short", max_length=8) == "short"
    with pytest.raises(ValueError, match="max_length"):
        escape_markdown("abc", max_length=3)


# --- xml_safe ---------------------------------------------------------------------------------


def test_xml_safe_removes_what_xml_forbids() -> None:
    assert xml_safe("a\x00b\x1bc\x7fd") == "abc\x7fd"  # U+007F is allowed in XML 1.0
    assert xml_safe("tab\tnl\ncr\r") == "tab\tnl\ncr\r"
    assert xml_safe("\ud800\udfff\ufffe\uffff") == ""
    assert xml_safe("<&>\"'") == "<&>\"'"  # markup is ElementTree's job
    assert xml_safe("\U0001f4a7 pipe") == "\U0001f4a7 pipe"


@settings(max_examples=150, deadline=None)
@given(st.text(st.characters(exclude_categories=()) | st.sampled_from(SPECIALS), max_size=40))
def test_xml_safe_text_survives_serialise_and_parse(text: str) -> None:
    safe = xml_safe(text)
    element = ET.Element("case", {"name": safe})
    element.text = safe
    parsed = ET.fromstring(ET.tostring(element, encoding="utf-8"))
    assert parsed.get("name") == safe
    # An XML parser normalises line ends in element text (XML 1.0 section 2.11).
    assert (parsed.text or "") == safe.replace("\r\n", "\n").replace("\r", "\n")

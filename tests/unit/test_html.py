"""gate.report.html: one self-contained, well-formed page; untrusted text stays text."""

from __future__ import annotations

import base64
import re
import struct
import xml.etree.ElementTree as ET
import zlib
from html.parser import HTMLParser
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from gate.errors import GateError
from gate.report.html import markdown_to_html, render_html, write_html

VOID = {"meta", "img", "br", "hr", "link", "input"}


def tiny_png(width: int = 3, height: int = 2) -> bytes:
    """A valid RGB PNG built by hand (PNG specification, ISO/IEC 15948: signature, IHDR, IDAT, IEND)."""

    def chunk(kind: bytes, data: bytes) -> bytes:
        return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", zlib.crc32(kind + data))

    rows = b"".join(b"\x00" + b"\xff\x00\x00" * width for _ in range(height))
    ihdr = struct.pack(">IIBBBBB", width, height, 8, 2, 0, 0, 0)
    return b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", ihdr) + chunk(b"IDAT", zlib.compress(rows)) + chunk(b"IEND", b"")


TINY_SVG = (
    '<?xml version="1.0" encoding="utf-8"?>\n'
    '<svg xmlns="http://www.w3.org/2000/svg" width="10" height="10"><rect width="10" height="10"/></svg>\n'
)


class Balance(HTMLParser):
    """Checks that every element is closed in order (void elements aside) and collects the text."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.tags: list[str] = []
        self.text: list[str] = []
        self.attrs: list[tuple[str, str, str | None]] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        self.attrs += [(tag, k, v) for k, v in attrs]
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        self.tags.append(tag)
        self.attrs += [(tag, k, v) for k, v in attrs]

    def handle_endtag(self, tag):
        assert self.stack and self.stack[-1] == tag, f"</{tag}> closes {self.stack[-1:]}"
        self.stack.pop()

    def handle_data(self, data):
        self.text.append(data)


def parse(page: str) -> Balance:
    checker = Balance()
    checker.feed(page)
    checker.close()
    assert checker.stack == [], f"unclosed: {checker.stack}"
    return checker


def parse_xml(fragment: str) -> ET.Element:
    return ET.fromstring(f"<div>{fragment}</div>")


def page_xml(page: str) -> ET.Element:
    assert page.startswith("<!DOCTYPE html>\n")
    return ET.fromstring(page.removeprefix("<!DOCTYPE html>\n"))


# --- the markdown subset ----------------------------------------------------------------------


SUMMARY = r"""# rankgate: FAIL

2 of 3 checks passed on `eval.parquet` (109 rows, 51 positive).

| check | slice | value | bound | outcome |
| :--- | :---: | ---: | --- | --- |
| recall at 5% FPR | district \[north\|east\] | 0.647 [0.51, 0.76] | at\_least 0.6 | **PASS** |
| roc\_auc | | 0.893 | max\_drop 0.005 | *FAIL* |
| short row |

## Failures

- roc\_auc: dropped by 0.012, more than 0.005
  allowed (continuation line)
- second item with a [link](javascript:alert(1)) and ![img](http://example.org/x.png)

> warning: the evaluation set is too small to be sure

```
methods: delong, 95% two-sided
<not a tag>
```

1. first
2. second

---
Policy leaks.toml \\ literal backslash, hard\
break
"""


def test_markdown_subset_by_hand() -> None:
    html_text = markdown_to_html(SUMMARY, heading_offset=1)
    root = parse_xml(html_text)
    assert [el.tag for el in root] == ["h2", "p", "table", "h3", "ul", "blockquote", "pre", "ol", "hr", "p"]
    assert "".join(root[0].itertext()) == "rankgate: FAIL"
    assert root[1].find("code").text == "eval.parquet"
    table = root[2]
    header = [th.text for th in table.iter("th")]
    assert header == ["check", "slice", "value", "bound", "outcome"]
    assert [th.get("class") for th in table.iter("th")] == ["left", "center", "right", "left", "left"]
    rows = [["".join(td.itertext()) for td in tr.iter("td")] for tr in table.find("tbody")]
    assert rows[0] == ["recall at 5% FPR", "district [north|east]", "0.647 [0.51, 0.76]", "at_least 0.6", "PASS"]
    assert rows[1] == ["roc_auc", "", "0.893", "max_drop 0.005", "FAIL"]
    assert rows[2] == ["short row", "", "", "", ""]  # GFM: short rows are padded
    assert table.find("tbody")[0][4].find("strong").text == "PASS"
    assert table.find("tbody")[1][4].find("em").text == "FAIL"
    items = ["".join(li.itertext()) for li in root[4]]
    assert items[0] == "roc_auc: dropped by 0.012, more than 0.005 allowed (continuation line)"
    # Links and images become text: nothing clickable, nothing loaded.
    assert items[1] == "second item with a link (javascript:alert(1)) and img (http://example.org/x.png)"
    assert root.find(".//a") is None and root.find(".//img") is None
    assert "".join(root[5].itertext()) == "warning: the evaluation set is too small to be sure"
    assert root[6].find("code").text == "methods: delong, 95% two-sided\n<not a tag>"
    assert [li.text for li in root[7]] == ["first", "second"]
    last = root[9]
    assert "".join(last.itertext()) == "Policy leaks.toml \\ literal backslash, hardbreak"
    assert last.find("br") is not None


@pytest.mark.parametrize(
    ("markdown", "expected"),
    [
        ("a \\*b\\* c", "<p>a *b* c</p>"),
        ("**bold** and *em* and snake_case_name", "<p><strong>bold</strong> and <em>em</em> and snake_case_name</p>"),
        ("`a|b` and ``x`y``", "<p><code>a|b</code> and <code>x`y</code></p>"),
        ("\\`not code\\`", "<p>`not code`</p>"),
        ("`\\*` stays", "<p><code>\\*</code> stays</p>"),  # CommonMark: no escapes inside code spans
        ("unclosed `tick", "<p>unclosed `tick</p>"),
        ("a < b & c > d \"q\" 'r'", "<p>a &lt; b &amp; c &gt; d &quot;q&quot; &#x27;r&#x27;</p>"),
        ("<script>alert(1)</script>", "<p>&lt;script&gt;alert(1)&lt;/script&gt;</p>"),
        ("## Title ##", "<h2>Title</h2>"),
        ("1\\. not a list", "<p>1. not a list</p>"),
        ("\\- not a bullet", "<p>- not a bullet</p>"),
        ("**a *b** c*", "<p>**a <em>b** c</em></p>"),  # crossed markers never produce crossed tags
        ("a\x00b\x1b", "<p>a\ufffdb\ufffd</p>"),
        ("a\ue000" + "0\ue001b", "<p>a\ufffd0\ufffdb</p>"),  # our placeholder code points cannot be forged
    ],
)
def test_inline_rules(markdown, expected) -> None:
    out = markdown_to_html(markdown)
    assert out == expected
    parse_xml(out)


def test_heading_offset_caps_at_six() -> None:
    assert markdown_to_html("###### deep", heading_offset=2) == "<h6>deep</h6>"


def test_pipes_in_table_cells() -> None:
    out = markdown_to_html("| a | b |\n| --- | --- |\n| x\\|y | `p\\|q` |")
    cells = ["".join(td.itertext()) for td in parse_xml(out).iter("td")]
    assert cells == ["x|y", "p|q"]  # GFM: the table consumes \| even inside a code span


@settings(max_examples=300, deadline=None)
@given(st.text(alphabet=st.sampled_from(list("ab |-*_`\\#>[]()!:<&\"'\n 1.\t~")), max_size=200))
def test_any_markdown_gives_well_formed_html_without_raw_markup(text) -> None:
    out = markdown_to_html(text)
    root = parse_xml(out)
    allowed = {"div", "h1", "h2", "h3", "h4", "h5", "h6", "p", "br", "hr", "table", "thead", "tbody", "tr",
               "th", "td", "ul", "ol", "li", "blockquote", "pre", "code", "strong", "em"}
    assert {el.tag for el in root.iter()} <= allowed
    assert all(set(el.attrib) <= {"class"} for el in root.iter())


@settings(max_examples=150, deadline=None)
@given(st.text(max_size=80))
def test_any_text_in_a_paragraph_survives_literally(text) -> None:
    # Text with every markdown character backslash-escaped must come out as exactly that text.
    punct = set("!\"#$%&'()*+,-./:;<=>?@[\\]^_`{|}~")
    escaped = "".join("\\" + ch if ch in punct else ch for ch in text)
    if not escaped.strip() or "\n" in text or "\r" in text or text != text.strip() or not text.isprintable():
        return
    root = parse_xml(markdown_to_html(escaped))
    assert "".join(root.itertext()) == text


# --- the page ---------------------------------------------------------------------------------


HOSTILE_TITLE = '<script>alert("x")</script> & </title><img src=http://evil.example/x> \x07'


def test_page_is_well_formed_and_escapes_the_title(tmp_path) -> None:
    out = write_html(tmp_path / "report.html", title=HOSTILE_TITLE, summary_markdown=SUMMARY)
    assert out == tmp_path / "report.html"
    page = out.read_text(encoding="utf-8")
    checker = parse(page)
    root = page_xml(page)
    assert root.tag == "html"
    expected = HOSTILE_TITLE.replace("\x07", "\ufffd")
    assert root.find("head/title").text == expected
    assert root.find("body/main/h1").text == expected
    assert "script" not in checker.tags
    assert "<script" not in page.lower()
    assert "evil.example" in page and "<img src=http" not in page  # shown as text only
    assert [p.name for p in tmp_path.iterdir()] == ["report.html"]  # no temp file left behind


def test_page_inlines_images_and_references_nothing_outside(tmp_path) -> None:
    png = tmp_path / "roc-recall.png"
    png.write_bytes(tiny_png())
    svg = tmp_path / "trend-recall.svg"
    svg.write_text(TINY_SVG, encoding="utf-8")
    page = render_html(title="nightly", summary_markdown="# ok", images=[png, svg])
    checker = parse(page)
    root = page_xml(page)
    imgs = list(root.iter("img"))
    assert [img.get("alt") for img in imgs] == ["chart roc-recall", "chart trend-recall"]
    assert [fc.text for fc in root.iter("figcaption")] == ["roc-recall.png", "trend-recall.svg"]
    srcs = [img.get("src") for img in imgs]
    assert srcs[0].startswith("data:image/png;base64,") and srcs[1].startswith("data:image/svg+xml;base64,")
    assert base64.b64decode(srcs[0].split(",", 1)[1]) == png.read_bytes()
    assert base64.b64decode(srcs[1].split(",", 1)[1]) == svg.read_bytes()
    # Self-contained: no URL outside data: in any attribute, no script, no stylesheet link,
    # no CSS url(), and a policy that forbids loading anything else.
    assert not re.search(r"https?://", page)
    assert "script" not in checker.tags and "link" not in checker.tags
    assert "url(" not in page
    for _tag, name, value in checker.attrs:
        if name in ("src", "href", "action", "srcset", "poster", "data"):
            assert value is not None and value.startswith("data:")
    csp = next(v for t, k, v in checker.attrs if t == "meta" and k == "content" and "default-src" in (v or ""))
    assert "default-src 'none'" in csp and "img-src data:" in csp


def test_png_and_svg_of_one_chart_appear_once_as_svg(tmp_path) -> None:
    (tmp_path / "roc.png").write_bytes(tiny_png())
    (tmp_path / "roc.svg").write_text(TINY_SVG)
    (tmp_path / "pr.png").write_bytes(tiny_png())
    images = [tmp_path / "roc.png", tmp_path / "roc.svg", tmp_path / "pr.png", tmp_path / "pr.png"]
    root = page_xml(render_html(title="t", summary_markdown="", images=images))
    assert [fc.text for fc in root.iter("figcaption")] == ["roc.svg", "pr.png"]


def test_text_summary_is_preformatted() -> None:
    page = render_html(title="t", summary_markdown="| not | a table |\n<b>", summary_format="text")
    pre = page_xml(page).find("body/main/section/pre")
    assert pre.text == "| not | a table |\n<b>"
    with pytest.raises(GateError, match="summary_format"):
        render_html(title="t", summary_markdown="", summary_format="rst")  # type: ignore[arg-type]


def test_no_charts_section_without_images() -> None:
    root = page_xml(render_html(title="t", summary_markdown="x"))
    assert root.find(".//section[@class='charts']") is None


@pytest.mark.parametrize(
    ("name", "content", "match"),
    [
        ("chart.gif", b"GIF89a", "only .png and .svg"),
        ("chart.png", b"not a png", "is not a PNG file"),
        ("chart.svg", b"<html></html>", "is not an SVG file"),
    ],
)
def test_bad_images_are_gate_errors(tmp_path, name, content, match) -> None:
    path = tmp_path / name
    path.write_bytes(content)
    with pytest.raises(GateError, match=match):
        write_html(tmp_path / "page.html", title="t", summary_markdown="", images=[path])
    assert not (tmp_path / "page.html").exists()


def test_missing_image_and_unwritable_page_are_gate_errors(tmp_path) -> None:
    with pytest.raises(GateError, match=r"cannot read image .*missing\.png"):
        write_html(tmp_path / "page.html", title="t", summary_markdown="", images=[tmp_path / "missing.png"])
    blocker = tmp_path / "file.txt"
    blocker.write_text("x")
    with pytest.raises(GateError, match="cannot write page"):
        write_html(blocker / "page.html", title="t", summary_markdown="")


def test_write_creates_the_directory_and_replaces_atomically(tmp_path) -> None:
    target = tmp_path / "artifacts" / "run" / "report.html"
    write_html(target, title="first", summary_markdown="one")
    write_html(target, title="second", summary_markdown="two")
    assert page_xml(target.read_text()).find("head/title").text == "second"
    assert sorted(p.name for p in target.parent.iterdir()) == ["report.html"]


def test_output_is_deterministic(tmp_path) -> None:
    (tmp_path / "a.png").write_bytes(tiny_png())
    kwargs = {"title": "t", "summary_markdown": SUMMARY, "images": [tmp_path / "a.png"]}
    assert render_html(**kwargs) == render_html(**kwargs)


def test_report_markdown_round_trips_hostile_names() -> None:
    # The summary writer's escaping (gate.report.escape) and this converter must agree: a
    # hostile check name and slice value come out as literal text, never as markup.
    from gate.report.escape import escape_markdown

    hostile = ["<img src=x onerror=alert(1)>", "a|b", "**x**", "`code`", "[l](javascript:x)", "# h", "1. x", "- y"]
    table = "\n".join(["| name | note |", "| --- | --- |"] + [f"| {escape_markdown(h)} | ok |" for h in hostile])
    paragraphs_md = [escape_markdown(h) for h in hostile]
    root = parse_xml(markdown_to_html("\n\n".join([table, *paragraphs_md])))
    cells = [td.text for td in root.iter("td") if td.text != "ok"]
    assert cells == hostile
    paragraphs = ["".join(p.itertext()) for p in root.iter("p")]
    assert paragraphs == hostile
    assert {el.tag for el in root.iter()} <= {"div", "table", "thead", "tbody", "tr", "th", "td", "p"}


def test_page_with_real_charts(tmp_path) -> None:
    pytest.importorskip("matplotlib")
    from gate.plots import ChartPoint, plot_trend

    files = plot_trend(
        [ChartPoint("r1", 0.7, 0.65, 0.75), ChartPoint("r2", 0.6, 0.55, 0.65, alarm="cusum")],
        title="recall <north>",
        path=tmp_path / "trend",
    )
    out = write_html(tmp_path / "page.html", title="nightly", summary_markdown="# ok", images=files)
    root = page_xml(out.read_text())
    imgs = list(root.iter("img"))
    assert len(imgs) == 1 and imgs[0].get("src").startswith("data:image/svg+xml;base64,")
    svg = base64.b64decode(imgs[0].get("src").split(",", 1)[1])
    assert ET.fromstring(svg).tag == "{http://www.w3.org/2000/svg}svg"
    assert out.stat().st_size > len(svg)


def test_module_does_not_need_matplotlib(monkeypatch, tmp_path) -> None:
    import sys

    monkeypatch.setitem(sys.modules, "matplotlib", None)
    write_html(tmp_path / "p.html", title="t", summary_markdown="x")
    assert Path(tmp_path / "p.html").exists()

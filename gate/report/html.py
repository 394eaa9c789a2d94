"""One self-contained HTML page: the run's summary plus its charts, to keep as a CI artifact.

The page references nothing outside itself: charts are inlined as ``data:`` URIs (PNG and SVG
both go through ``<img>``, so an SVG can never run script in the page), the style sheet is
inline, there is no script at all, and a Content-Security-Policy forbids loading anything else.

The summary is our own markdown (as :mod:`gate.report.markdown` writes it) converted by a small,
deliberately narrow converter of our own: headings, pipe tables, bullet / numbered lists, block
quotes, fenced code, rules and paragraphs; inline code, bold, emphasis and backslash escapes.
Every piece of text is escaped with :func:`html.escape`; raw HTML in the input is shown as text,
never passed through, and links are shown as text with their target (nothing is clickable, so a
hostile slice value cannot smuggle in a ``javascript:`` link). The output is well-formed XML
(void elements self-closed) as well as HTML.
"""

from __future__ import annotations

import base64
import html
import re
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Literal

from gate._files import new_file_mode, write_bytes_atomic
from gate.errors import GateError

__all__ = ["markdown_to_html", "render_html", "write_html"]

_PNG_MAGIC = b"\x89PNG\r\n\x1a\n"
_MIME = {".png": "image/png", ".svg": "image/svg+xml"}

# No external resource may load, no script may run; inline <style> and data: images only.
_CSP = "default-src 'none'; img-src data:; style-src 'unsafe-inline'; base-uri 'none'; form-action 'none'"

_CSS = """
body { font-family: system-ui, -apple-system, "Segoe UI", sans-serif; margin: 0; color: #1b1b1b;
       background: #fff; line-height: 1.45; }
main { max-width: 1100px; margin: 0 auto; padding: 1.5rem 1.25rem 3rem; }
h1 { font-size: 1.6rem; border-bottom: 2px solid #0072B2; padding-bottom: .3rem; }
h2 { font-size: 1.3rem; margin-top: 2rem; } h3 { font-size: 1.1rem; }
table { border-collapse: collapse; margin: .8rem 0; font-size: .92rem; }
th, td { border: 1px solid #c8c8c8; padding: .3rem .6rem; vertical-align: top; }
th { background: #f1f4f7; } tr:nth-child(even) td { background: #fafafa; }
.left { text-align: left; } .center { text-align: center; } .right { text-align: right; }
code, pre { font-family: ui-monospace, "SFMono-Regular", Menlo, Consolas, monospace; font-size: .9em; }
code { background: #f3f3f3; padding: 0 .2em; border-radius: 3px; }
pre { background: #f6f8fa; border: 1px solid #e1e4e8; padding: .7rem; overflow-x: auto; }
pre code { background: none; padding: 0; }
blockquote { margin: .8rem 0; padding: .3rem .9rem; border-left: 4px solid #E69F00; background: #fffaf0; }
figure { margin: 1.2rem 0; } figure img { max-width: 100%; height: auto; border: 1px solid #e5e5e5; }
figcaption { font-size: .85rem; color: #555; }
""".strip()

# Characters that XML 1.0 forbids (and HTML treats as errors): C0 controls except tab / newline /
# carriage return, lone surrogates, U+FFFE / U+FFFF.
_FORBIDDEN = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f\ud800-\udfff\ufffe\uffff]")


def _esc(text: object) -> str:
    """Untrusted text for HTML element content or a quoted attribute."""
    return html.escape(_FORBIDDEN.sub("\ufffd", str(text)), quote=True)


# --- inline markdown --------------------------------------------------------------------------

_PUNCT = frozenset("!\"#$%&'()*+,-./:;<=>?@[\\]^_`{|}~")
_LINK = re.compile(r"!?\[([^\]\n]*)\]\(([^)\s]*)\)")
_TOKEN = re.compile("\ue000(\\d+)\ue001")  # private-use code points: never escaped away
# Emphasis may not contain a tag; bold may contain whole <em> elements: the result nests properly.
_EM = re.compile(r"(?<![*\w])\*(?=[^\s*])([^<>]+?)(?<=[^\s*])\*(?![*\w])")
_STRONG = re.compile(r"\*\*(?=\S)((?:[^<>]|<em>[^<>]*</em>)+?)(?<=\S)\*\*")


def _inline(text: str) -> str:
    """Inline markdown to HTML: code spans, backslash escapes, bold, emphasis; all else escaped.

    One left-to-right scan sets code spans and backslash-escaped characters aside as numbered
    tokens (as CommonMark reads them: an escaped backtick opens no code span, a backslash inside
    a code span is literal), so nothing inside them can be read as markup. The rest is escaped,
    then the few markup patterns are applied and the tokens put back.
    """
    s = text.replace("\ue000", "\ufffd").replace("\ue001", "\ufffd")
    saved: list[str] = []
    buf: list[str] = []

    def keep(fragment_html: str) -> None:
        saved.append(fragment_html)
        buf.append(f"\ue000{len(saved) - 1}\ue001")

    i, n = 0, len(s)
    while i < n:
        c = s[i]
        if c == "\\" and i + 1 < n and s[i + 1] in _PUNCT:
            keep(_esc(s[i + 1]))
            i += 2
        elif c == "`":
            j = i
            while j < n and s[j] == "`":
                j += 1
            run = s[i:j]
            close = _closing_run(s, j, len(run))
            if close < 0:
                keep(_esc(run))  # no matching run: literal backticks
                i = j
            else:
                body = s[j:close]
                if body.strip() and body.startswith(" ") and body.endswith(" "):
                    body = body[1:-1]
                keep(f"<code>{_esc(body)}</code>")
                i = close + len(run)
        else:
            buf.append(c)
            i += 1
    s = "".join(buf)
    # Links and images become text: nothing in the page may point elsewhere.
    s = _LINK.sub(lambda m: m.group(1) + (f" ({m.group(2)})" if m.group(2) else ""), s)
    s = _esc(s)
    s = _EM.sub(r"<em>\1</em>", s)
    s = _STRONG.sub(r"<strong>\1</strong>", s)
    return _TOKEN.sub(lambda m: saved[int(m.group(1))], s)


def _closing_run(s: str, start: int, length: int) -> int:
    """Index of the next run of exactly ``length`` backticks at or after ``start``, else -1."""
    i = s.find("`" * length, start)
    while i >= 0:
        j = i + length
        if (i == 0 or s[i - 1] != "`") and (j >= len(s) or s[j] != "`"):
            return i
        while j < len(s) and s[j] == "`":
            j += 1
        i = s.find("`" * length, j)
    return -1


# --- block markdown ---------------------------------------------------------------------------

_HEADING = re.compile(r"^ {0,3}(#{1,6})[ \t]+(.*?)(?:[ \t]+#+)?[ \t]*$")
_FENCE = re.compile(r"^ {0,3}(`{3,}|~{3,})(.*)$")
_RULE = re.compile(r"^ {0,3}([-*_])(?:[ \t]*\1){2,}[ \t]*$")
_BULLET = re.compile(r"^ {0,3}[-*+][ \t]+(.*)$")
_ORDERED = re.compile(r"^ {0,3}\d{1,9}[.)][ \t]+(.*)$")
_QUOTE = re.compile(r"^ {0,3}>[ \t]?(.*)$")
_TABLE_SEP = re.compile(r"^ {0,3}\|?[ \t]*:?-+:?[ \t]*(\|[ \t]*:?-+:?[ \t]*)*\|?[ \t]*$")


def _split_row(line: str) -> list[str]:
    """Cells of a pipe-table row; ``\\|`` is a literal pipe, not a separator."""
    s = line.strip()
    if s.startswith("|"):
        s = s[1:]
    if s.endswith("|") and not s.endswith("\\|"):
        s = s[:-1]
    cells, cur, i = [], [], 0
    while i < len(s):
        if s[i] == "\\" and i + 1 < len(s):
            # GFM: the table consumes "\|" (even inside a code span); other escapes stay for _inline.
            cur.append("|" if s[i + 1] == "|" else s[i : i + 2])
            i += 2
            continue
        if s[i] == "|":
            cells.append("".join(cur).strip())
            cur = []
        else:
            cur.append(s[i])
        i += 1
    cells.append("".join(cur).strip())
    return cells


def _is_table_start(lines: list[str], i: int) -> bool:
    return (
        i + 1 < len(lines)
        and "|" in lines[i]
        and bool(_TABLE_SEP.match(lines[i + 1]))
        and "-" in lines[i + 1]
        and len(_split_row(lines[i + 1])) == len(_split_row(lines[i]))
    )


def _table(lines: list[str], i: int, out: list[str]) -> int:
    header = _split_row(lines[i])
    aligns = []
    for spec in _split_row(lines[i + 1]):
        left, right = spec.startswith(":"), spec.endswith(":")
        aligns.append("center" if left and right else "right" if right else "left")
    width = len(header)

    def cls(j: int) -> str:
        return f' class="{aligns[j]}"'

    out.append("<table>")
    out.append("<thead><tr>" + "".join(f"<th{cls(j)}>{_inline(c)}</th>" for j, c in enumerate(header)))
    out[-1] += "</tr></thead>"
    i += 2
    body = []
    while i < len(lines) and lines[i].strip() and "|" in lines[i]:
        cells = (_split_row(lines[i]) + [""] * width)[:width]  # GFM: pad or cut to the header
        body.append("<tr>" + "".join(f"<td{cls(j)}>{_inline(c)}</td>" for j, c in enumerate(cells)) + "</tr>")
        i += 1
    if body:
        out.append("<tbody>")
        out.extend(body)
        out.append("</tbody>")
    out.append("</table>")
    return i


def _starts_block(lines: list[str], i: int) -> bool:
    line = lines[i]
    return bool(
        not line.strip()
        or _HEADING.match(line)
        or _FENCE.match(line)
        or _RULE.match(line)
        or _BULLET.match(line)
        or _ORDERED.match(line)
        or _QUOTE.match(line)
        or _is_table_start(lines, i)
    )


def markdown_to_html(text: str, *, heading_offset: int = 0) -> str:
    """Convert our summary markdown to escaped, well-formed HTML (a narrow, safe subset).

    Parameters
    ----------
    text : markdown; untrusted pieces in it are escaped on the way out.
    heading_offset : added to every heading level (capped at 6), e.g. 1 to sit under a page h1.

    Returns
    -------
    str : HTML fragment. Raw HTML in ``text`` appears as text; links appear as ``text (target)``.
    """
    lines = str(text).replace("\r\n", "\n").replace("\r", "\n").split("\n")
    out: list[str] = []
    i = 0
    while i < len(lines):
        line = lines[i]
        if not line.strip():
            i += 1
            continue
        if m := _FENCE.match(line):
            fence = m.group(1)
            body = []
            i += 1
            while i < len(lines) and not lines[i].strip().startswith(fence):
                body.append(lines[i])
                i += 1
            i += 1  # the closing fence (or the end of the text)
            out.append("<pre><code>" + _esc("\n".join(body)) + "</code></pre>")
            continue
        if m := _HEADING.match(line):
            level = min(6, len(m.group(1)) + max(0, heading_offset))
            out.append(f"<h{level}>{_inline(m.group(2))}</h{level}>")
            i += 1
            continue
        if _is_table_start(lines, i):
            i = _table(lines, i, out)
            continue
        if _RULE.match(line):
            out.append("<hr />")
            i += 1
            continue
        if _QUOTE.match(line):
            quoted = []
            while i < len(lines) and (m := _QUOTE.match(lines[i])):
                quoted.append(m.group(1))
                i += 1
            out.append("<blockquote>" + markdown_to_html("\n".join(quoted), heading_offset=heading_offset))
            out[-1] += "</blockquote>"
            continue
        if _BULLET.match(line) or _ORDERED.match(line):
            pattern, tag = (_BULLET, "ul") if _BULLET.match(line) else (_ORDERED, "ol")
            items: list[list[str]] = []
            while i < len(lines):
                if m := pattern.match(lines[i]):
                    items.append([m.group(1)])
                elif lines[i].strip() and lines[i].startswith((" ", "\t")) and not _starts_block(lines, i):
                    items[-1].append(lines[i].strip())  # a wrapped continuation line
                else:
                    break
                i += 1
            out.append(f"<{tag}>" + "".join(f"<li>{_inline(' '.join(it))}</li>" for it in items) + f"</{tag}>")
            continue
        para = [line.strip()]
        i += 1
        while i < len(lines) and not _starts_block(lines, i):
            para.append(lines[i].strip())
            i += 1
        out.append("<p>" + "<br />".join(_inline(p) for p in _hard_breaks(para)) + "</p>")
    return "\n".join(out)


def _hard_breaks(lines: list[str]) -> list[str]:
    """Join paragraph lines with spaces, except after a trailing backslash (a hard line break)."""
    joined: list[str] = [""]
    for line in lines:
        if joined[-1]:
            joined[-1] += " "
        if line.endswith("\\") and not line.endswith("\\\\"):
            joined[-1] += line[:-1].rstrip()
            joined.append("")
        else:
            joined[-1] += line
    return [j for j in joined if j] or [""]


# --- images -----------------------------------------------------------------------------------


def _pick_images(images: Iterable[Path | str]) -> list[Path]:
    """The images in order, without repeats; when a chart comes as both PNG and SVG, the SVG."""
    paths: list[Path] = []
    for img in images:
        p = Path(img)
        if p.suffix.lower() not in _MIME:
            raise GateError(f"cannot inline {str(p)!r}: only .png and .svg images are supported")
        if p not in paths:
            paths.append(p)
    stems_with_svg = {p.with_suffix("") for p in paths if p.suffix.lower() == ".svg"}
    return [p for p in paths if p.suffix.lower() == ".svg" or p.with_suffix("") not in stems_with_svg]


def _data_uri(path: Path) -> str:
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise GateError(f"cannot read image {str(path)!r}: {exc.strerror or exc}") from None
    kind = path.suffix.lower()
    if kind == ".png" and not data.startswith(_PNG_MAGIC):
        raise GateError(f"image {str(path)!r} is not a PNG file")
    if kind == ".svg" and b"<svg" not in data[:4096]:
        raise GateError(f"image {str(path)!r} is not an SVG file")
    return f"data:{_MIME[kind]};base64," + base64.b64encode(data).decode("ascii")


def _figure(path: Path) -> str:
    alt = f"chart {path.stem}"
    return (
        f'<figure><img src="{_data_uri(path)}" alt="{_esc(alt)}" />'
        f"<figcaption>{_esc(path.name)}</figcaption></figure>"
    )


# --- the page ---------------------------------------------------------------------------------


def render_html(
    *,
    title: str,
    summary_markdown: str,
    images: Sequence[Path | str] = (),
    summary_format: Literal["markdown", "text"] = "markdown",
) -> str:
    """The whole page as a string (see :func:`write_html`)."""
    from gate import __version__

    if summary_format == "markdown":
        summary = markdown_to_html(summary_markdown, heading_offset=1)
    elif summary_format == "text":
        summary = f"<pre>{_esc(summary_markdown)}</pre>"
    else:
        raise GateError(f"summary_format must be 'markdown' or 'text', got {summary_format!r}")
    figures = [_figure(p) for p in _pick_images(images)]
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en">',
        "<head>",
        '<meta charset="utf-8" />',
        f'<meta http-equiv="Content-Security-Policy" content="{_esc(_CSP)}" />',
        '<meta name="viewport" content="width=device-width, initial-scale=1" />',
        f'<meta name="generator" content="rankgate {_esc(__version__)}" />',
        f"<title>{_esc(title)}</title>",
        f"<style>\n{_CSS}\n</style>",
        "</head>",
        "<body>",
        "<main>",
        f"<h1>{_esc(title)}</h1>",
        '<section class="summary">',
        summary,
        "</section>",
    ]
    if figures:
        parts += ['<section class="charts">', "<h2>Charts</h2>", *figures, "</section>"]
    parts += ["</main>", "</body>", "</html>", ""]
    return "\n".join(parts)


def write_html(
    path: Path | str,
    *,
    title: str,
    summary_markdown: str,
    images: Sequence[Path | str] = (),
    summary_format: Literal["markdown", "text"] = "markdown",
) -> Path:
    """Write one self-contained page (summary + charts inline) atomically; return its path.

    Parameters
    ----------
    path : the page to write; its directory is created when missing.
    title : page title (untrusted text is escaped).
    summary_markdown : the run summary as our markdown, or plain text with
        ``summary_format="text"`` (shown preformatted).
    images : ``.png`` / ``.svg`` charts, inlined in the order given; repeats are dropped, and a
        chart given as both ``X.png`` and ``X.svg`` appears once, as SVG.

    Raises
    ------
    GateError
        An image is missing, unreadable or not PNG / SVG, or the page cannot be written.
    """
    target = Path(path)
    page = render_html(
        title=title, summary_markdown=summary_markdown, images=images, summary_format=summary_format
    ).encode("utf-8")
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
        # mkstemp makes 0600; the page is an ordinary artifact
        write_bytes_atomic(target, page, mode=new_file_mode())
    except OSError as exc:
        raise GateError(f"cannot write page {str(target)!r}: {exc.strerror or exc}") from None
    return target

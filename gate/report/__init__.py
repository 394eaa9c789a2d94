"""Reports over an evaluation :class:`gate.results.Result`: markdown, JSON and JUnit XML.

Each renderer is a pure function of the Result and returns text that is byte-identical for
equal inputs; :func:`write_report` puts text in a file atomically. Untrusted text (slice
values, check names, notes, file names) is escaped by :mod:`gate.report.escape`.

The JSON renderer lives in ``gate/report/json.py``; the package's own modules refer to the
standard library's ``json`` under another name, so the two never meet.
"""

from __future__ import annotations

from gate.report.escape import escape_markdown, one_line, xml_safe
from gate.report.json import SCHEMA_VERSION, render_json
from gate.report.junit import render_junit
from gate.report.markdown import render_markdown
from gate.report.output import write_report

__all__ = [
    "SCHEMA_VERSION",
    "escape_markdown",
    "one_line",
    "render_json",
    "render_junit",
    "render_markdown",
    "write_report",
    "xml_safe",
]

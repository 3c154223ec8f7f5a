"""Reports people read and machines parse, all rendered from ONE JSON document.

:func:`build_report` turns a run (``feeler check``, ``feeler campaign``, the pytest plugin) into the
report document (format ``feeler-report/1``, described by ``schema/report.schema.json`` in this
package). Every other format is a function of that document alone (:data:`FORMATS`), so a merged
report (:func:`merge_reports`) renders exactly like a single one, and no format depends on feeler's
internal classes.
"""

from __future__ import annotations

from feeler.report.document import REPORT_FORMAT, build_report, load_report, report_schema, validate_report
from feeler.report.formats import FORMATS, render, write_reports
from feeler.report.merge import merge_reports

__all__ = [
    "FORMATS",
    "REPORT_FORMAT",
    "build_report",
    "load_report",
    "merge_reports",
    "render",
    "report_schema",
    "validate_report",
    "write_reports",
]

"""Reports: JSON, Markdown, self-contained HTML with plots, and JUnit XML from analysis snapshots.

`build_report(...)` (livefix.report.document) makes one JSON-able dict; the writers render it.
"""

"""Printed outputs: the case-conference report with its drawn arterial map, and the
nursing checklist for each patient and shift.

Every module here imports reportlab inside its functions or is itself imported only by
the ``report``, ``checklist`` and ``demo`` commands, never by ``vascplan.cli`` at start-up.

Modules
-------
text
    Safe text: every string from a user file becomes a literal paragraph, never markup.
page
    The page template: paper sizes, fonts, the caution, page numbers and the timestamp
    on every page; documents are built into memory and written atomically.
layout
    The map's anatomical layout table (``data/reports/map_layout.csv``) and geometry.
arterial_map
    The drawn arterial tree (reportlab graphics) and its legend.
map_input
    The map's input built from the arterial tree and the route planner's result.
case_report
    The case-conference report.
checklist
    The nursing checklist, one patient per page.
service
    What the commands call: load, plan, render, write atomically.
demo
    The demo's PDFs.
"""

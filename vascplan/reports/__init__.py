"""Printed outputs: the case-conference report with its drawn arterial map, and the
nursing checklist for each patient and shift.

Every module here imports reportlab inside its functions or is itself imported only by
the ``report``, ``checklist`` and ``demo`` commands, never by ``vascplan.cli`` at start-up.

Modules
-------
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

The page template and safe text every PDF shares are :mod:`vascplan.pdf` (below this
package, so that the observation record's trend PDF uses them too).
"""

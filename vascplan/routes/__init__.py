"""Access route planning: where to puncture, which way, and why.

Modules, one concern each:

- :mod:`~vascplan.routes.settings`: the limits and weights tables, with overrides.
- :mod:`~vascplan.refdata.sites`: the access-site catalogue (``data/access/sites.csv``).
- :mod:`~vascplan.routes.pathfind`: catheter paths through the arterial tree.
- :mod:`~vascplan.routes.limits`: the hard limits (reason codes).
- :mod:`~vascplan.routes.scoring`: the soft factors and the score.
- :mod:`~vascplan.routes.dual`: pairs of routes for an occlusion.
- :mod:`~vascplan.routes.largebore`: the large-bore support comparison.
- :mod:`~vascplan.routes.result`: result objects and their JSON contract.
- :mod:`~vascplan.routes.plan`: :func:`~vascplan.routes.plan.plan_case`, the entry point.
- :mod:`~vascplan.routes.table`: the table and explanation for people.
"""

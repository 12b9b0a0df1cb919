"""The observation record: every limb check stored durably, reviewed, plotted and exported.

Modules, one concern each:

- :mod:`~vascplan.observations.findings` the item/site/value vocabulary and its validation
- :mod:`~vascplan.observations.store` the append-only store (SQLite or PostgreSQL) and migrations
- :mod:`~vascplan.observations.csvio` the long-form CSV: template, import, export
- :mod:`~vascplan.observations.ali` acute limb ischaemia category (Rutherford et al. 1997)
- :mod:`~vascplan.observations.abi` ankle-brachial index (AHA 2012 statement, 2016 bands)
- :mod:`~vascplan.observations.review` overdue checks and deterioration alerts, who to call
- :mod:`~vascplan.observations.trend` the trend PDF
- :mod:`~vascplan.observations.fhir` the HL7 FHIR R4 Bundle export

Nothing here imports SQLAlchemy or reportlab at module import time except ``store``,
``trend`` and ``fhir``, which only the ``obs`` commands load.
"""

"""Reference data read from the bundled tables, below every model that checks against it.

- :mod:`~vascplan.refdata.anatomy`: the reference adult arterial tree
  (``data/anatomy/segments.csv``) that the case model, the tree, the routes and the
  ward's risk assessment all read.
"""

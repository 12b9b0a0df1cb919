"""Moved to :mod:`vascplan.sizing.tables` (public: other packages read the sizing tables).

Kept for one release so that code written against the old name still runs. A test refuses
any import of it inside the package.
"""

from vascplan.sizing.tables import *  # noqa: F403

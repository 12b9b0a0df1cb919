"""Moved to :mod:`vascplan.refdata.anatomy` (the reference table sits below the case model).

This name is kept for one release so that code written against it still runs; import
from :mod:`vascplan.refdata.anatomy`. A test refuses any import of it inside the package.
"""

from vascplan.refdata.anatomy import *  # noqa: F403

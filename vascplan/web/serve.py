"""The application as uvicorn's worker processes build it (``vascplan serve``)."""

from __future__ import annotations

import os

from starlette.applications import Starlette

from vascplan.web.app import create_app


def app_from_environment() -> Starlette:
    """The app for the store, unit and session settings ``vascplan serve`` put in the
    environment (every worker process builds its own from the same settings)."""
    return create_app(
        os.environ.get("VASCPLAN_SERVE_DB") or None,
        unit=os.environ.get("VASCPLAN_SERVE_UNIT") or None,
        idle_min=int(os.environ.get("VASCPLAN_SERVE_IDLE_MIN") or 30),
        https=bool(os.environ.get("VASCPLAN_SERVE_HTTPS")),
    )

"""The ward's web face: the application factory and the routes table, top to bottom.

Every page is rendered on the server (Jinja2) and every form works without script. The
server keeps no state of its own: the session lives in a signed cookie (its key shared
through the store) and everything else in the store, so several worker processes or hosts
can serve one PostgreSQL store.
"""

from __future__ import annotations

import contextlib
from collections.abc import AsyncIterator, Callable
from contextlib import AbstractAsyncContextManager
from datetime import UTC, datetime

from starlette.applications import Starlette
from starlette.middleware import Middleware
from starlette.middleware.sessions import SessionMiddleware
from starlette.routing import Mount, Route
from starlette.staticfiles import StaticFiles

from vascplan.ward.store import WardStore
from vascplan.web import admin, auth, board, patient
from vascplan.web.common import SecurityHeaders, WebConfig

IDLE_TIMEOUT_MIN = 30
"""Minutes without a request after which a session ends (unit policy; set per unit with
``vascplan serve --idle-min``)."""

ROUTES = [
    Route("/health", board.health, methods=["GET"]),
    Route("/", board.home, methods=["GET"]),
    Route("/login", auth.login_form, methods=["GET"]),
    Route("/login", auth.login, methods=["POST"]),
    Route("/logout", auth.logout, methods=["POST"]),
    Route("/board", board.board_page, methods=["GET"]),
    Route("/board/live", board.board_live, methods=["GET"]),
    Route("/patients/{ref}", patient.patient_page, methods=["GET"]),
    Route("/patients/{ref}/check", patient.check_form, methods=["GET"]),
    Route("/patients/{ref}/check", patient.check_post, methods=["POST"]),
    Route("/patients/{ref}/events/{kind}", patient.event_form, methods=["GET"]),
    Route("/patients/{ref}/events/{kind}", patient.event_post, methods=["POST"]),
    Route("/admit", patient.admit_form, methods=["GET"]),
    Route("/admit", patient.admit_post, methods=["POST"]),
    Route("/entries/{entry_id:int}/correct", patient.correct_form, methods=["GET"]),
    Route("/entries/{entry_id:int}/correct", patient.correct_post, methods=["POST"]),
    Route("/patients/{ref}/export.csv", patient.export_csv, methods=["GET"]),
    Route("/patients/{ref}/export.fhir.json", patient.export_fhir, methods=["GET"]),
    Route("/patients/{ref}/checklist.pdf", patient.export_checklist, methods=["GET"]),
    Route("/users", admin.users_page, methods=["GET"]),
    Route("/users", admin.users_post, methods=["POST"]),
    Route("/users/{name}/disable", admin.disable_post, methods=["POST"]),
    Route("/audit", admin.audit_page, methods=["GET"]),
    Mount("/static", StaticFiles(packages=[("vascplan.web", "static")]), name="static"),
]


def _closing(store: WardStore) -> Callable[[Starlette], AbstractAsyncContextManager[None]]:
    @contextlib.asynccontextmanager
    async def lifespan(app: Starlette) -> AsyncIterator[None]:
        yield
        store.close()

    return lifespan


def create_app(
    db_url: str | None,
    *,
    clock: Callable[[], datetime] | None = None,
    secret: str | None = None,
    unit: str | None = None,
    idle_min: int = IDLE_TIMEOUT_MIN,
    https: bool = False,
    login_delay_s: float = 1.0,
) -> Starlette:
    """The ward application on one store.

    Parameters
    ----------
    db_url : str or None
        The store: an SQLite file path or a ``postgresql://`` URL (None: the default file).
    clock : callable, optional
        Returns the current aware moment (tests inject one); default the system clock.
    secret : str, optional
        The key that signs session cookies; default one kept in the store (shared by every
        process serving it).
    unit : str, optional
        The unit to show; default the store's first unit.
    idle_min : int
        Session idle time-out [min].
    https : bool
        Mark the session cookie Secure (served over TLS).
    login_delay_s : float
        Pause after a failed sign-in [s] (slows password guessing).
    """
    from vascplan.app.ward import unit_name
    from vascplan.ward.store import open_ward

    store = open_ward(db_url)
    config = WebConfig(
        store=store,
        unit=unit_name(store, unit) if unit is not None else None,
        clock=clock or (lambda: datetime.now(UTC)),
        login_delay_s=login_delay_s,
    )
    key = secret or store.secret()
    app = Starlette(
        routes=ROUTES,
        middleware=[
            Middleware(SecurityHeaders),
            Middleware(
                SessionMiddleware,
                secret_key=key,
                session_cookie="vascplan_session",
                max_age=idle_min * 60,
                same_site="strict",
                https_only=https,
            ),
        ],
        exception_handlers=auth.EXCEPTION_HANDLERS,
        lifespan=_closing(store),
    )
    app.state.config = config
    return app

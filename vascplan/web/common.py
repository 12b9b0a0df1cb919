"""What every page shares: configuration, the signed-in person, CSRF, templates, headers."""

from __future__ import annotations

import hmac
import secrets
from collections.abc import Callable
from dataclasses import dataclass
from datetime import datetime
from typing import Any

from starlette.concurrency import run_in_threadpool
from starlette.requests import Request
from starlette.responses import RedirectResponse, Response
from starlette.templating import Jinja2Templates
from starlette.types import ASGIApp, Message, Receive, Scope, Send

from vascplan.app.ward import DUE_SOON_MIN
from vascplan.errors import VascplanError
from vascplan.safety import CAUTION
from vascplan.ward.store import WardStore


@dataclass
class WebConfig:
    store: WardStore
    unit: str | None
    clock: Callable[[], datetime]
    login_delay_s: float


@dataclass(frozen=True)
class Person:
    name: str
    role: str


class NotSignedIn(VascplanError):
    """No valid session: the page sends the browser to /login."""


class CsrfRefused(VascplanError):
    """A POST without the session's CSRF token (403)."""


def config(request: Request) -> WebConfig:
    return request.app.state.config


def now(request: Request) -> datetime:
    return config(request).clock()


def address(request: Request) -> str:
    return request.client.host if request.client else "-"


def unit_of(request: Request) -> str:
    from vascplan.app.ward import unit_name

    cfg = config(request)
    return cfg.unit or unit_name(cfg.store)


def csrf_token(request: Request) -> str:
    """The session's CSRF token, made on first use (also for the sign-in page)."""
    token = request.session.get("csrf")
    if not token:
        token = secrets.token_urlsafe(32)
        request.session["csrf"] = token
    return str(token)


def check_csrf(request: Request, form: Any) -> None:
    sent = str(form.get("csrf") or "")
    expected = str(request.session.get("csrf") or "")
    if not sent or not expected or not hmac.compare_digest(sent, expected):
        raise CsrfRefused("the form's security token is missing or out of date")


def person(request: Request) -> Person:
    """The signed-in person, checked against the store on every request (a disabled
    account's session stops at once)."""
    name = request.session.get("user")
    if not name:
        raise NotSignedIn("sign in first")
    user = config(request).store.user(str(name))
    if user is None or user.disabled:
        request.session.pop("user", None)
        raise NotSignedIn("the account is disabled")
    return Person(user.username, user.role)


def audit(request: Request, author: str, action: str, what: str) -> None:
    config(request).store.audit(author, address(request), action, what, now(request))


async def run(fn: Callable[..., Any], *args: Any, **kwargs: Any) -> Any:
    """Run store work in a worker thread (the event loop keeps serving others)."""
    return await run_in_threadpool(fn, *args, **kwargs)


def _hm(moment: datetime | None) -> str:
    if moment is None:
        return "-"
    off = moment.strftime("%z")
    return f"{moment:%H:%M} ({off[:3]}:{off[3:]})"


def _when(moment: datetime | None) -> str:
    if moment is None:
        return "-"
    return moment.isoformat(timespec="minutes").replace("T", " ")


def _local_input(moment: datetime) -> str:
    return moment.strftime("%Y-%m-%dT%H:%M")


def _templates() -> Jinja2Templates:
    import jinja2

    env = jinja2.Environment(
        loader=jinja2.PackageLoader("vascplan.web", "templates"),
        autoescape=True,
        trim_blocks=True,
        lstrip_blocks=True,
    )
    env.filters["hm"] = _hm
    env.filters["when"] = _when
    env.filters["local_input"] = _local_input
    return Jinja2Templates(env=env)


TEMPLATES = _templates()

TIER_MARK = {"standard": "●", "raised": "▲", "high": "▲▲"}
STATUS_TEXT = {
    "alert": ("⚠", "Alert"),
    "overdue": ("⚑", "Check overdue"),
    "due-soon": ("◔", "Check due soon"),
    "ok": ("✓", "On time"),
}


def page(
    request: Request,
    name: str,
    context: dict[str, Any],
    status_code: int = 200,
    user: Person | None = None,
) -> Response:
    """Render a page with what every page carries: the caution, the person, the token."""
    base = {
        "caution": CAUTION,
        "user": user,
        "csrf": csrf_token(request),
        "tier_mark": TIER_MARK,
        "status_text": STATUS_TEXT,
        "title": "",
        "due_soon_min": DUE_SOON_MIN,
    }
    return TEMPLATES.TemplateResponse(request, name, {**base, **context}, status_code=status_code)


def to_login(request: Request) -> Response:
    path = request.url.path
    nxt = path if path.startswith("/") and not path.startswith("//") else "/board"
    return RedirectResponse(f"/login?next={nxt}", status_code=303)


CSP = (
    "default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data:; "
    "connect-src 'self'; form-action 'self'; frame-ancestors 'none'; base-uri 'none'; "
    "object-src 'none'"
)

SECURITY_HEADERS = [
    (b"content-security-policy", CSP.encode()),
    (b"x-frame-options", b"DENY"),
    (b"x-content-type-options", b"nosniff"),
    (b"referrer-policy", b"no-referrer"),
    (b"cache-control", b"no-store"),
    (b"cross-origin-opener-policy", b"same-origin"),
]


class SecurityHeaders:
    """Adds the security headers to every response (pure ASGI, no buffering)."""

    def __init__(self, app: ASGIApp) -> None:
        self.app = app

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return

        async def send_with_headers(message: Message) -> None:
            if message["type"] == "http.response.start":
                names = {k.lower() for k, _ in message.get("headers", [])}
                extra = [(k, v) for k, v in SECURITY_HEADERS if k not in names]
                message["headers"] = [*message.get("headers", []), *extra]
            await send(message)

        await self.app(scope, receive, send_with_headers)

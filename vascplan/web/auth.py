"""Signing in and out, and how refusals look (the exception handlers)."""

from __future__ import annotations

import asyncio

from starlette.requests import Request
from starlette.responses import RedirectResponse, Response

from vascplan.app.ward import Forbidden, NotFound
from vascplan.errors import InputError
from vascplan.web.common import (
    CsrfRefused,
    NotSignedIn,
    audit,
    check_csrf,
    config,
    page,
    run,
    to_login,
)

MAX_FIELD = 200
"""Longest user name or password the sign-in form reads (longer is refused, not hashed)."""


def _next(request: Request, value: str | None) -> str:
    nxt = value or request.query_params.get("next") or "/board"
    # Only a path on this server: never "//host" or "/\\host" (read as another host).
    safe = nxt.startswith("/") and not nxt.startswith(("//", "/\\")) and "\\" not in nxt
    return nxt if safe else "/board"


async def login_form(request: Request) -> Response:
    return page(
        request,
        "login.html",
        {"title": "Sign in", "error": "", "username": "", "next": _next(request, None)},
    )


async def login(request: Request) -> Response:
    from vascplan.app.accounts import authenticate

    form = await request.form()
    check_csrf(request, form)
    username = str(form.get("username") or "").strip()
    password = str(form.get("password") or "")
    nxt = _next(request, str(form.get("next") or ""))
    user = None
    if username and password and len(username) <= MAX_FIELD and len(password) <= MAX_FIELD:
        user = await run(authenticate, config(request).store, username, password)
    if user is None:
        await run(audit, request, username[:60] or "-", "sign-in-failed", "wrong name or password")
        await asyncio.sleep(config(request).login_delay_s)
        return page(
            request,
            "login.html",
            {
                "title": "Sign in",
                "error": "The user name or password is wrong, or the account is disabled.",
                "username": username[:MAX_FIELD],
                "next": nxt,
            },
            status_code=401,
        )
    request.session.clear()
    request.session["user"] = user.username
    await run(audit, request, user.username, "sign-in", f"signed in as {user.role}")
    return RedirectResponse(nxt, status_code=303)


async def logout(request: Request) -> Response:
    form = await request.form()
    check_csrf(request, form)
    name = request.session.get("user")
    request.session.clear()
    if name:
        await run(audit, request, str(name), "sign-out", "signed out")
    return RedirectResponse("/login", status_code=303)


def _message(request: Request, status: int, title: str, text: str) -> Response:
    return page(request, "message.html", {"title": title, "message": text}, status_code=status)


async def _not_signed_in(request: Request, exc: Exception) -> Response:
    if request.method == "GET":
        return to_login(request)
    return _message(request, 401, "Signed out", "Your session has ended: sign in again.")


async def _csrf(request: Request, exc: Exception) -> Response:
    return _message(
        request,
        403,
        "Form refused",
        f"{exc}: nothing was recorded. Open the page again and resend the form.",
    )


async def _forbidden(request: Request, exc: Exception) -> Response:
    return _message(request, 403, "Not allowed", f"{exc}; nothing was recorded.")


async def _not_found(request: Request, exc: Exception) -> Response:
    return _message(request, 404, "Not found", str(exc))


async def _input(request: Request, exc: Exception) -> Response:
    return _message(request, 400, "Not recorded", f"{exc}; nothing was recorded.")


async def _http(request: Request, exc: Exception) -> Response:
    from starlette.exceptions import HTTPException

    code = exc.status_code if isinstance(exc, HTTPException) else 500
    if code == 405:
        return _message(request, 405, "Not allowed", f"{request.method} is not used on this page")
    return _message(request, code, "Not found", f"no page {request.url.path}")


EXCEPTION_HANDLERS = {
    404: _http,
    405: _http,
    NotSignedIn: _not_signed_in,
    CsrfRefused: _csrf,
    Forbidden: _forbidden,
    NotFound: _not_found,
    InputError: _input,
}

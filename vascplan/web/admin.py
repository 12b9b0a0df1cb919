"""Accounts and the audit trail (admin only)."""

from __future__ import annotations

from starlette.requests import Request
from starlette.responses import RedirectResponse, Response

from vascplan.app.ward import Forbidden, FormErrors
from vascplan.web.common import Person, audit, check_csrf, config, now, page, person, run


def _admin(request: Request) -> Person:
    user = person(request)
    if user.role != "admin":
        raise Forbidden("only an admin may manage accounts or read the audit trail")
    return user


async def users_page(request: Request) -> Response:
    from vascplan.app.accounts import list_users

    user = _admin(request)
    rows = await run(list_users, config(request).store)
    return page(
        request,
        "users.html",
        {"title": "Accounts", "rows": rows, "values": {}, "errors": {}},
        user=user,
    )


async def users_post(request: Request) -> Response:
    from vascplan.app.accounts import add_user, list_users

    user = _admin(request)
    form = await request.form()
    check_csrf(request, form)
    values = {k: str(v) for k, v in form.items()}
    name, role = values.get("username", "").strip(), values.get("role", "")
    try:
        await run(
            add_user,
            config(request).store,
            name,
            role,
            values.get("password", ""),
            by=user.name,
            now=now(request),
        )
    except FormErrors as exc:
        rows = await run(list_users, config(request).store)
        shown = {k: v for k, v in values.items() if k != "password"}
        ctx = {"title": "Accounts", "rows": rows, "values": shown, "errors": exc.errors}
        return page(request, "users.html", ctx, status_code=400, user=user)
    await run(audit, request, user.name, "user-add", f"{name} as {role}")
    return RedirectResponse("/users", status_code=303)


async def disable_post(request: Request) -> Response:
    from vascplan.app.accounts import disable_user

    user = _admin(request)
    form = await request.form()
    check_csrf(request, form)
    name = request.path_params["name"]
    await run(disable_user, config(request).store, name, by=user.name, now=now(request))
    await run(audit, request, user.name, "user-disable", name)
    return RedirectResponse("/users", status_code=303)


async def audit_page(request: Request) -> Response:
    from vascplan.app.accounts import audit_trail

    user = _admin(request)
    rows = await run(audit_trail, config(request).store, 500)
    return page(request, "audit.html", {"title": "Audit trail", "rows": rows[::-1]}, user=user)

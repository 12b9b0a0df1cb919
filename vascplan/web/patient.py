"""A patient's page, the bedside check, events, corrections and the patient's exports."""

from __future__ import annotations

import secrets
from typing import Any

from starlette.requests import Request
from starlette.responses import RedirectResponse, Response

from vascplan.app import ward as app_ward
from vascplan.app.ward import FormErrors
from vascplan.web.common import audit, check_csrf, config, now, page, person, run, unit_of
from vascplan.web.svg import trend_charts

_RESERVED = ("csrf", "form_token", "time")


async def patient_page(request: Request) -> Response:
    user = person(request)
    ref = request.path_params["ref"]
    view = await run(
        app_ward.patient_view, config(request).store, unit_of(request), ref, now(request)
    )
    tz = view.at.tzinfo
    charts = trend_charts(view.trend, view.at, tz)
    return page(
        request,
        "patient.html",
        {
            "title": f"{ref}, bed {view.patient.bed}",
            "v": view,
            "charts": charts,
            "saved": request.query_params.get("saved", ""),
        },
        user=user,
    )


def _check_context(form: app_ward.CheckForm, **extra: Any) -> dict[str, Any]:
    return {
        "title": f"Check: {form.patient.ref}, bed {form.patient.bed}",
        "f": form,
        "values": {},
        "errors": {},
        "time_value": form.at.strftime("%Y-%m-%dT%H:%M"),
        "form_token": secrets.token_urlsafe(24),
        **extra,
    }


async def check_form(request: Request) -> Response:
    user = person(request)
    ref = request.path_params["ref"]
    form = await run(
        app_ward.check_form, config(request).store, unit_of(request), ref, now(request)
    )
    return page(request, "check.html", _check_context(form), user=user)


async def check_post(request: Request) -> Response:
    user = person(request)
    ref = request.path_params["ref"]
    form = await request.form()
    check_csrf(request, form)
    store, name, at = config(request).store, unit_of(request), now(request)
    values = {k: str(v) for k, v in form.items() if k not in _RESERVED}
    time_text = str(form.get("time") or "")
    token = str(form.get("form_token") or "")
    try:
        done = await run(
            app_ward.record_check,
            store,
            name,
            ref,
            values,
            time_text,
            author=user.name,
            now=at,
            token=token,
        )
    except FormErrors as exc:
        shown = await run(app_ward.check_form, store, name, ref, at)
        ctx = _check_context(
            shown, values=values, errors=exc.errors, time_value=time_text, form_token=token
        )
        return page(request, "check.html", ctx, status_code=400, user=user)
    if not done.again:
        await run(audit, request, user.name, "check", done.what)
    return RedirectResponse(f"/patients/{ref}?saved=check", status_code=303)


def _event_context(kind: str, ref: str, at: Any, **extra: Any) -> dict[str, Any]:
    from vascplan.app.events import EVENT_FORMS

    title, fields = EVENT_FORMS[kind]
    return {
        "title": title,
        "kind": kind,
        "ref": ref,
        "fields": fields,
        "values": {},
        "errors": {},
        "time_value": at.strftime("%Y-%m-%dT%H:%M"),
        "form_token": secrets.token_urlsafe(24),
        **extra,
    }


def _local_now(request: Request) -> Any:
    from vascplan.app.ward import snapshot

    store, name, at = config(request).store, unit_of(request), now(request)
    return snapshot(store, name, at).at


async def _event_get(request: Request, ref: str, kind: str) -> Response:
    from vascplan.app.events import EVENT_FORMS, PHYSICIAN_ONLY

    user = person(request)
    if kind not in EVENT_FORMS:
        raise app_ward.NotFound(f"no event {kind!r}")
    if kind in PHYSICIAN_ONLY and user.role != "physician":
        raise app_ward.Forbidden(f"only a physician may record {EVENT_FORMS[kind][0].lower()}")
    at = await run(_local_now, request)
    return page(request, "event.html", _event_context(kind, ref, at), user=user)


async def _event_post(request: Request, ref: str, kind: str) -> Response:
    from vascplan.app.events import record_event

    user = person(request)
    form = await request.form()
    check_csrf(request, form)
    values = {k: str(v) for k, v in form.items() if k not in _RESERVED}
    time_text = str(form.get("time") or "")
    token = str(form.get("form_token") or "")
    try:
        done = await run(
            record_event,
            config(request).store,
            unit_of(request),
            ref,
            kind,
            values,
            time_text,
            author=user.name,
            role=user.role,
            now=now(request),
            token=token,
        )
    except FormErrors as exc:
        at = await run(_local_now, request)
        ctx = _event_context(
            kind, ref, at, values=values, errors=exc.errors, time_value=time_text, form_token=token
        )
        return page(request, "event.html", ctx, status_code=400, user=user)
    if not done.again:
        await run(audit, request, user.name, "event", done.what)
    if kind in ("admit", "discharge"):
        return RedirectResponse("/board", status_code=303)
    return RedirectResponse(f"/patients/{ref}?saved={kind}", status_code=303)


async def event_form(request: Request) -> Response:
    return await _event_get(request, request.path_params["ref"], request.path_params["kind"])


async def event_post(request: Request) -> Response:
    return await _event_post(request, request.path_params["ref"], request.path_params["kind"])


async def admit_form(request: Request) -> Response:
    return await _event_get(request, "", "admit")


async def admit_post(request: Request) -> Response:
    return await _event_post(request, "", "admit")


async def correct_form(request: Request) -> Response:
    user = person(request)
    entry = await run(app_ward.entry_of, config(request).store, request.path_params["entry_id"])
    return page(
        request,
        "correct.html",
        {"title": f"Correct entry {entry.id}", "e": entry, "values": {}, "errors": {}},
        user=user,
    )


async def correct_post(request: Request) -> Response:
    user = person(request)
    form = await request.form()
    check_csrf(request, form)
    store = config(request).store
    entry_id = request.path_params["entry_id"]
    values = {k: str(v) for k, v in form.items()}
    try:
        entry, new_id = await run(
            app_ward.correct_entry,
            store,
            entry_id,
            value=values.get("value", ""),
            withdraw=bool(values.get("withdraw")),
            reason=values.get("reason", ""),
            author=user.name,
        )
    except FormErrors as exc:
        entry = await run(app_ward.entry_of, store, entry_id)
        ctx = {"title": f"Correct entry {entry_id}", "e": entry, "values": values}
        return page(request, "correct.html", {**ctx, "errors": exc.errors}, 400, user=user)
    await run(
        audit,
        request,
        user.name,
        "correction",
        f"entry {new_id} corrects entry {entry_id} ({entry.ref} {entry.item} {entry.site})",
    )
    return RedirectResponse(f"/patients/{entry.ref}?saved=correction", status_code=303)


async def _export(request: Request, fn: Any, media: str, suffix: str) -> Response:
    user = person(request)
    ref = request.path_params["ref"]
    body = await run(fn, config(request).store, unit_of(request), ref, now(request))
    await run(audit, request, user.name, "export", f"{ref} {suffix}")
    from vascplan.fileio import safe_filename

    name = f"{safe_filename(ref)}-{suffix}"
    return Response(
        body, media_type=media, headers={"content-disposition": f'attachment; filename="{name}"'}
    )


async def export_csv(request: Request) -> Response:
    from vascplan.app.exports import patient_csv

    return await _export(request, patient_csv, "text/csv; charset=utf-8", "findings.csv")


async def export_fhir(request: Request) -> Response:
    from vascplan.app.exports import patient_fhir

    return await _export(request, patient_fhir, "application/fhir+json", "findings.fhir.json")


async def export_checklist(request: Request) -> Response:
    from vascplan.app.exports import patient_checklist

    return await _export(request, patient_checklist, "application/pdf", "checklist.pdf")

"""The unit board, its live refresh, the home redirect and the health answer."""

from __future__ import annotations

from starlette.requests import Request
from starlette.responses import JSONResponse, RedirectResponse, Response

from vascplan.web.common import config, now, page, person, run, unit_of

REFRESH_S = 30
"""How often the board's script asks the server for a fresh board [s]."""


async def health(request: Request) -> Response:
    return JSONResponse({"status": "ok"})


async def home(request: Request) -> Response:
    person(request)
    return RedirectResponse("/board", status_code=303)


async def _board(request: Request):
    from vascplan.app.ward import board

    return await run(board, config(request).store, unit_of(request), now(request))


async def board_page(request: Request) -> Response:
    user = person(request)
    data = await _board(request)
    return page(
        request,
        "board.html",
        {"title": f"Board: {data.unit}", "board": data, "refresh_s": REFRESH_S},
        user=user,
    )


async def board_live(request: Request) -> Response:
    """The board's rows alone, for the script that refreshes the page in place."""
    user = person(request)
    data = await _board(request)
    response = page(request, "board_rows.html", {"board": data}, user=user)
    response.headers["x-vascplan-board"] = data.at.isoformat()
    return response

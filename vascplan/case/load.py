"""Reading a case file: :func:`load_case`, with one clear line for every mistake.

Pydantic's own messages are reworded here for a clinician: the allowed range with its
unit (``must be 100-230 cm``), the allowed words, and a did-you-mean for a misspelt
field name or value.
"""

from __future__ import annotations

import os
import types
import typing
from typing import Any

import annotated_types
from pydantic import BaseModel, ValidationError
from pydantic.fields import FieldInfo

from vascplan.case.model import FIELD_ERROR, Case
from vascplan.errors import InputError
from vascplan.fileio import did_you_mean, field_path, read_document

_UNITS = {"_cm": " cm", "_mm": " mm", "_pct": "%", "_fr": " Fr", "_kg": " kg"}


def load_case(path: str | os.PathLike[str]) -> Case:
    """Read and validate one case file (YAML or JSON).

    Parameters
    ----------
    path : path-like
        The case file.

    Returns
    -------
    Case
        The validated case.

    Raises
    ------
    InputError
        One line naming the file, the field path and what is allowed: syntax errors
        (with the line), duplicate keys, an empty, non-UTF-8 or far too large file,
        wrong types, unknown fields or segment ids (with a did-you-mean), implausible
        diameters, stenosis outside 0-100, a lesion or stent past its segment's end,
        height outside 100-230 cm.

    Examples
    --------
    >>> from vascplan.paths import examples_dir
    >>> case = load_case(examples_dir() / "case-DEMO-07-sfa-occlusion.yaml")
    >>> case.patient.ref
    'DEMO-07'
    """
    source = str(path)
    return validate_case(source, read_document(path))


def validate_case(source: str, data: Any) -> Case:
    """Validate already-read data as a case; every failure is one :class:`InputError`."""
    if not isinstance(data, dict):
        raise InputError(
            source, "", f"expected a mapping of case fields at the top, got {_kind(data)}"
        )
    from vascplan.textsafety import check_document

    check_document(source, data)
    try:
        return Case.model_validate(data, context={"source": source})
    except ValidationError as exc:
        raise case_error(source, exc) from None


_KINDS = {dict: "a mapping", list: "a list", str: "text", bool: "true/false"}
_NUMBERS = (int, float)


def _kind(value: Any) -> str:
    if value is None:
        return "nothing (an empty value)"
    if type(value) in _NUMBERS:
        return "a number"
    return _KINDS.get(type(value), type(value).__name__)


def _shown(value: Any) -> str:
    if type(value) in _NUMBERS:
        return f"the number {value!r}"
    if isinstance(value, str | bool):
        return f"{_kind(value)} {value!r}"
    return _kind(value)


def _unwrap(annotation: Any) -> list[Any]:
    """The concrete types inside Optional/Union/Annotated."""
    origin = typing.get_origin(annotation)
    if origin is typing.Annotated:
        return _unwrap(typing.get_args(annotation)[0])
    if origin in (typing.Union, types.UnionType):
        out: list[Any] = []
        for arg in typing.get_args(annotation):
            if arg is not type(None):
                out.extend(_unwrap(arg))
        return out
    return [annotation]


def _walk(loc: tuple[Any, ...]) -> tuple[type[BaseModel] | None, FieldInfo | None]:
    """The model holding the last field of ``loc``, and that field's info."""
    current: list[Any] = [Case]
    model: type[BaseModel] | None = None
    info: FieldInfo | None = None
    for part in loc:
        nxt: list[Any] = []
        for tp in current:
            origin = typing.get_origin(tp)
            if isinstance(tp, type) and issubclass(tp, BaseModel) and isinstance(part, str):
                fields = {f.alias or name: f for name, f in tp.model_fields.items()}
                if part in fields:
                    model, info = tp, fields[part]
                    nxt.extend(_unwrap(info.annotation))
                else:
                    model, info = tp, None
            elif origin is list and isinstance(part, int):
                nxt.extend(_unwrap(typing.get_args(tp)[0]))
            elif origin is dict:
                nxt.extend(_unwrap(typing.get_args(tp)[1]))
        current = nxt
    return model, info


def _range_text(info: FieldInfo | None, name: str) -> str | None:
    if info is None:
        return None
    bounds: dict[str, float] = {}
    for meta in info.metadata:
        for attr in ("ge", "gt", "le", "lt"):
            if isinstance(meta, getattr(annotated_types, attr.capitalize())):
                bounds[attr] = getattr(meta, attr)
    unit = next((u for suffix, u in _UNITS.items() if name.endswith(suffix)), "")
    if "ge" in bounds and "le" in bounds:
        return f"must be {bounds['ge']:g}-{bounds['le']:g}{unit}"
    words = {"ge": "at least", "gt": "more than", "le": "at most", "lt": "less than"}
    parts = [f"{words[k]} {bounds[k]:g}" for k in ("ge", "gt", "le", "lt") if k in bounds]
    return f"must be {' and '.join(parts)}{unit}" if parts else None


def case_error(source: str, exc: ValidationError) -> InputError:
    """Turn the first error of a case ``ValidationError`` into one clear line."""
    err = exc.errors(include_url=False)[0]
    loc = tuple(
        p for p in err.get("loc", ()) if not (isinstance(p, str) and p.startswith("function-"))
    )
    kind = err.get("type", "")
    value = err.get("input")
    if "[key]" in loc:
        return InputError(
            source,
            field_path(p for p in loc if p != "[key]"),
            f"keys must be text (a name such as L-CFA), got {value!r}",
        )
    name = str(loc[-1]) if loc else ""
    model, info = _walk(loc)
    got = f" (got {value!r})" if isinstance(value, str | int | float | bool) else ""
    if kind == FIELD_ERROR:
        ctx = err.get("ctx") or {}
        return InputError(source, field_path((*loc, ctx["field"])), str(ctx["message"]))
    if kind == "invalid_key":
        return InputError(
            source,
            field_path(loc[:-1]),
            f"keys must be text (field names such as {'height_cm' if loc[:-1] else 'patient'}),"
            f" got {value!r}",
        )
    if kind == "missing":
        msg = "required field is missing"
    elif kind == "extra_forbidden":
        allowed = [f.alias or n for n, f in model.model_fields.items()] if model is not None else []
        msg = f"unknown field{did_you_mean(name, allowed)}"
        if allowed:
            msg += f"; allowed: {', '.join(allowed)}"
    elif kind in ("greater_than", "greater_than_equal", "less_than", "less_than_equal"):
        msg = (_range_text(info, name) or err.get("msg", "out of range")) + got
    elif kind == "literal_error":
        expected = (err.get("ctx") or {}).get("expected", "")
        words = [w.strip(" '") for w in expected.replace(" or ", ",").split(",") if w.strip()]
        hint = did_you_mean(str(value), words) if isinstance(value, str) else ""
        msg = f"must be one of: {', '.join(words)}{got}{hint}"
    elif kind in ("float_type", "int_type", "float_parsing", "int_parsing"):
        msg = f"must be a number, got {_shown(value)}"
    elif kind == "finite_number":
        msg = f"must be a finite number, got {value!r}"
    elif kind == "bool_type":
        msg = f"must be true or false, got {_shown(value)}"
    elif kind == "string_type":
        msg = f"must be text, got {_shown(value)}"
        if isinstance(value, int | float | bool):
            msg += " (put it in quotes to keep it as written)"
    elif kind in ("dict_type", "model_type", "model_attributes_type"):
        msg = f"must be a mapping of fields, got {_kind(value)}"
    elif kind == "list_type":
        msg = f"must be a list, got {_kind(value)}"
    elif kind == "string_too_short":
        msg = "must not be empty"
    elif kind == "string_too_long":
        msg = f"is too long (at most {(err.get('ctx') or {}).get('max_length')} characters)"
    elif kind == "string_pattern_mismatch":
        msg = f"may hold only letters, digits, spaces and . _ - (first a letter or digit){got}"
    else:
        msg = err.get("msg", "invalid value")
        if msg.startswith("Value error, "):
            msg = msg[len("Value error, ") :]
    return InputError(source, field_path(loc), msg)

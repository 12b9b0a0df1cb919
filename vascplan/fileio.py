"""Reading case, unit and protocol files safely, and writing outputs atomically.

One place for what every input file needs: a size cap, UTF-8, YAML through a safe
loader that refuses duplicate keys, JSON likewise, and turning a pydantic
``ValidationError`` into one :class:`~vascplan.errors.InputError` line.
"""

from __future__ import annotations

import contextlib
import json
import os
import re
import tempfile
from collections.abc import Iterable, Iterator
from pathlib import Path
from typing import IO, Any, TypeVar

import yaml
from pydantic import BaseModel, ValidationError

from vascplan.errors import InputError

MAX_INPUT_BYTES = 2_000_000
"""A case or unit file larger than this is refused (a real one is a few kB)."""

M = TypeVar("M", bound=BaseModel)


class _UniqueKeyLoader(yaml.SafeLoader):
    """A safe YAML loader that refuses a mapping with the same key twice."""


def _construct_mapping(
    loader: _UniqueKeyLoader, node: yaml.MappingNode, deep: bool = False
) -> dict:
    seen: dict[Any, int] = {}
    for key_node, _ in node.value:
        key = loader.construct_object(key_node, deep=deep)
        if key in seen:
            raise yaml.constructor.ConstructorError(
                None,
                None,
                f"duplicate key {key!r} (first on line {seen[key] + 1})",
                key_node.start_mark,
            )
        seen[key] = key_node.start_mark.line
    return yaml.SafeLoader.construct_mapping(loader, node, deep=deep)


_UniqueKeyLoader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG, _construct_mapping)
# Timestamps stay strings: the models parse them with the unit's time zone.
_UniqueKeyLoader.yaml_implicit_resolvers = {
    first: [(tag, rx) for tag, rx in resolvers if tag != "tag:yaml.org,2002:timestamp"]
    for first, resolvers in yaml.SafeLoader.yaml_implicit_resolvers.items()
}
# YAML 1.1 (PyYAML) reads 1e-3 without a dot as text; YAML 1.2 and JSON read it as a number,
# and so do we. Integers still resolve first (their resolver comes earlier in each list).
_UniqueKeyLoader.add_implicit_resolver(
    "tag:yaml.org,2002:float",
    re.compile(r"^[-+]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)[eE][-+]?[0-9]+$"),
    list("-+0123456789."),
)


def _plain_number(tag: str):
    base = yaml.SafeLoader.yaml_constructors[tag]

    def construct(loader: yaml.SafeLoader, node: yaml.Node) -> Any:
        # YAML reads 6_4 as 64; a number with an underscore in a file is a typo.
        if isinstance(node, yaml.ScalarNode) and "_" in node.value:
            raise yaml.constructor.ConstructorError(
                None,
                None,
                f"{node.value} is not a plain number: write ASCII digits 0-9 without "
                "underscores (quote it if it is text)",
                node.start_mark,
            )
        return base(loader, node)

    return construct


for _tag in ("tag:yaml.org,2002:int", "tag:yaml.org,2002:float"):
    _UniqueKeyLoader.add_constructor(_tag, _plain_number(_tag))


def _json_pairs(pairs: list[tuple[str, Any]]) -> dict:
    out: dict[str, Any] = {}
    for key, value in pairs:
        if key in out:
            raise ValueError(f"duplicate key {key!r}")
        out[key] = value
    return out


def read_text_file(
    path: str | os.PathLike[str], *, max_bytes: int, expected: str = "a YAML or JSON file"
) -> str:
    """Read a whole input file as UTF-8 text, refusing what cannot be one.

    Parameters
    ----------
    path : path-like
    max_bytes : int
        Files larger than this are refused without being read whole.
    expected : str
        What the file should be, for the messages (``a CSV file``).

    Raises
    ------
    InputError
        Missing, a folder or not a regular file (a pipe), too large, not UTF-8 (with the
        line of the first bad byte).
    """
    p = Path(path)
    src = str(path)
    try:
        size = p.stat().st_size
    except FileNotFoundError:
        raise InputError(src, "", "file not found") from None
    except OSError as exc:
        raise InputError(src, "", f"cannot read file ({exc.strerror})") from None
    if p.is_dir():
        raise InputError(src, "", f"is a folder, expected {expected}")
    if not p.is_file():
        raise InputError(src, "", f"is not a regular file, expected {expected}")
    if size > max_bytes:
        raise InputError(
            src, "", f"file is {size:,} bytes, far too large (at most {max_bytes:,} bytes)"
        )
    try:
        with p.open("rb") as fh:
            raw = fh.read(max_bytes + 1)
    except OSError as exc:
        raise InputError(src, "", f"cannot read file ({exc.strerror})") from None
    if len(raw) > max_bytes:  # grew since stat
        raise InputError(src, "", f"file is far too large (more than {max_bytes:,} bytes)")
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise InputError(
            src,
            f"line {line}",
            f"not UTF-8 text (byte {exc.start} cannot be decoded); save the file as UTF-8",
        ) from None
    return text.removeprefix("\ufeff")


def read_document(path: str | os.PathLike[str], *, max_bytes: int = MAX_INPUT_BYTES) -> Any:
    """Read a YAML or JSON file into plain Python data.

    Parameters
    ----------
    path : path-like
        ``.json`` files are read as JSON; anything else as YAML (JSON is valid YAML).
    max_bytes : int
        Files larger than this are refused without being read whole.

    Raises
    ------
    InputError
        Missing, too large, not UTF-8, empty, a syntax error (with its line) or a
        duplicate key.
    """
    src = str(path)
    text = read_text_file(path, max_bytes=max_bytes)
    if not text.strip():
        raise InputError(src, "", "file is empty")
    try:
        is_json = Path(path).suffix.lower() == ".json"
        data = _parse_json(src, text) if is_json else parse_yaml(src, text)
    except RecursionError:
        raise InputError(src, "", "nested far too deeply to be a case or unit file") from None
    if data is None:
        raise InputError(src, "", "file holds no data")
    return data


def parse_yaml(src: str, text: str) -> Any:
    """Parse YAML text as every vascplan input file is read (safe, no duplicate keys).

    ``src`` names the text in the :class:`InputError` of a syntax error.

    >>> parse_yaml("<text>", "a: 1e-3")
    {'a': 0.001}
    """
    try:
        return yaml.load(text, Loader=_UniqueKeyLoader)  # noqa: S506 - safe loader subclass
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        line = f"line {mark.line + 1}" if mark is not None else ""
        problem = exc.problem or exc.context or "syntax error"
        if exc.context and problem.startswith("but "):
            # "expected a single document in the stream, but found another document"
            problem = f"{exc.context}, {problem}"
        raise InputError(src, line, f"YAML error: {problem}") from None
    except yaml.reader.ReaderError as exc:  # a control character YAML does not allow
        from vascplan.textsafety import describe

        row = text[: exc.position].count("\n") + 1
        code = exc.character
        char = chr(code) if isinstance(code, int) else str(code)
        raise InputError(
            src, f"line {row}", f"the control character {describe(char)} is not allowed"
        ) from None
    except yaml.YAMLError as exc:
        raise InputError(src, "", f"YAML error: {' '.join(str(exc).split())}") from None


def _parse_json(src: str, text: str) -> Any:
    try:
        return json.loads(text, object_pairs_hook=_json_pairs)
    except json.JSONDecodeError as exc:
        raise InputError(src, f"line {exc.lineno}", f"JSON syntax error: {exc.msg}") from None
    except ValueError as exc:
        # A duplicate key: JSON's parser gives no position, the YAML one does (valid JSON
        # is YAML); fall back to the bare message when YAML cannot read this JSON, or
        # when the file is too big for the slower YAML parser to be worth it.
        if len(text) <= _LOCATE_DUPLICATE_MAX_CHARS:
            try:
                parse_yaml(src, text)
            except InputError as located:
                if located.field.startswith("line ") and "duplicate key" in located.message:
                    message = located.message.replace("YAML", "JSON")
                    raise InputError(src, located.field, message) from None
        raise InputError(src, "", f"JSON error: {exc}") from None


_LOCATE_DUPLICATE_MAX_CHARS = 200_000


def field_path(loc: Iterable[Any]) -> str:
    """Join a pydantic error location into a dotted path (``lesions.0.start_cm``)."""
    return ".".join(str(part) for part in loc)


def input_error_from_validation(source: str, exc: ValidationError) -> InputError:
    """Turn the first error of a pydantic ``ValidationError`` into one clear line."""
    err = exc.errors(include_url=False)[0]
    loc = [p for p in err.get("loc", ()) if not (isinstance(p, str) and p.startswith("function-"))]
    msg = err.get("msg", "invalid value")
    if msg.startswith("Value error, "):
        msg = msg[len("Value error, ") :]
    if err.get("type") == "extra_forbidden":
        msg = "unknown field"
        ctx = err.get("ctx") or {}
        if "suggest" in ctx:
            msg += f" (did you mean {ctx['suggest']!r}?)"
    elif err.get("type") == "missing":
        msg = "required field is missing"
    value = err.get("input")
    if err.get("type") not in ("missing", "extra_forbidden") and isinstance(
        value, str | int | float | bool
    ):
        shown = (
            f"{len(value):,} characters"
            if isinstance(value, str) and len(value) > 60
            else repr(value)
        )
        msg = f"{msg} (got {shown})"
    return InputError(source, field_path(loc), msg)


def load_model(path: str | os.PathLike[str], model: type[M], **context: Any) -> M:
    """Read ``path`` and validate it as ``model``; every failure is an InputError."""
    data = read_document(path)
    return validate_data(str(path), data, model, **context)


def validate_data(source: str, data: Any, model: type[M], **context: Any) -> M:
    """Validate already-read data as ``model``; every failure is an InputError."""
    if not isinstance(data, dict):
        raise InputError(
            source, "", f"expected a mapping of fields at the top, got {type(data).__name__}"
        )
    from vascplan.textsafety import check_document

    check_document(source, data)
    try:
        return model.model_validate(data, context={"source": source, **context})
    except ValidationError as exc:
        raise input_error_from_validation(source, exc) from None


def did_you_mean(word: str, choices: Iterable[str]) -> str:
    """Return `` (did you mean 'X'?)`` for the closest choice, or an empty string."""
    import difflib

    close = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.5)
    return f" (did you mean {close[0]!r}?)" if close else ""


# ---------------------------------------------------------------------------
# Output


def current_umask() -> int:
    """The process's umask (read by setting it and putting it back)."""
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


@contextlib.contextmanager
def atomic_output(
    path: str | os.PathLike[str], mode: int = 0o640, *, binary: bool = False
) -> Iterator[IO[Any]]:
    """A file written in place of ``path`` only when the block ends without error.

    Text (UTF-8, ``\n`` kept as written) unless ``binary``. The file goes through a
    temporary file renamed into place: a failure part-way leaves the previous file (or
    none), never a half-written one. The file gets ``mode`` less the umask: 0640 by default
    (patient outputs are never more open); pass 0o666 for a file with nothing about a
    patient in it.

    Raises
    ------
    InputError
        The place cannot be written (a folder, a read-only or missing place, ``/proc``):
        one line naming the path.
    """
    target = Path(path)
    src = str(path)
    if target.is_dir():
        raise InputError(src, "", "is a folder; give a file name to write")
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=target.parent)
    except OSError as exc:
        raise InputError(src, "", _cannot_write(exc)) from None
    done = False
    try:
        fh: IO[Any] = (
            os.fdopen(fd, "wb") if binary else os.fdopen(fd, "w", encoding="utf-8", newline="")
        )
        with fh:
            yield fh
            fh.flush()
            os.fsync(fh.fileno())
        done = True  # from here on, an error is about the place, not the content
        os.chmod(tmp, mode & ~current_umask() & 0o777)
        os.replace(tmp, target)
    except BaseException as exc:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        if done and isinstance(exc, OSError):
            raise InputError(src, "", _cannot_write(exc)) from None
        raise


def atomic_write_bytes(path: str | os.PathLike[str], data: bytes, mode: int = 0o640) -> Path:
    """Write ``data`` to ``path`` atomically (see :func:`atomic_output`)."""
    try:
        with atomic_output(path, mode, binary=True) as fh:
            fh.write(data)
    except OSError as exc:  # the write itself (a full disk)
        raise InputError(str(path), "", _cannot_write(exc)) from None
    return Path(path)


def _cannot_write(exc: OSError) -> str:
    reason = exc.strerror or str(exc) or type(exc).__name__
    return f"cannot write here ({reason}); choose a folder you can write to"


def atomic_write_text(path: str | os.PathLike[str], text: str, mode: int = 0o640) -> Path:
    """Write UTF-8 text atomically (see :func:`atomic_write_bytes`)."""
    return atomic_write_bytes(path, text.encode("utf-8"), mode)


_UNSAFE = re.compile(r"[^A-Za-z0-9._-]+")


def safe_filename(text: str, default: str = "unnamed") -> str:
    """Turn user text (a patient ref) into a file name that stays in its folder.

    >>> safe_filename("DEMO-07")
    'DEMO-07'
    >>> safe_filename("../../etc/passwd")
    'etc_passwd'
    >>> safe_filename("<b>&</b>")
    'b_b'
    """
    name = _UNSAFE.sub("_", text).strip("._-")
    name = re.sub(r"\.{2,}", ".", name)
    return name[:80] or default


def path_inside(
    name: str,
    folders: Iterable[str | os.PathLike[str]],
    source: str,
    field: str,
    allowed: str,
) -> Path:
    """Resolve ``name`` (a file named inside another file) within one of ``folders``.

    A relative name is taken from the first folder; the result, with every ``..`` and
    symbolic link resolved, must lie inside one of the folders, else an
    :class:`InputError` says where files may be (``allowed``). Returns the joined path
    (not resolved, so that messages show it as the user wrote it).
    """
    folders = list(folders)
    roots = [Path(f).resolve() for f in folders]
    raw = Path(name)
    joined = raw if raw.is_absolute() else Path(folders[0]) / raw
    target = joined.resolve()
    if not any(target == r or target.is_relative_to(r) for r in roots):
        raise InputError(
            source, field, f"{name!r} lies outside {allowed}; a file named here must be inside"
        )
    return joined


def output_inside(folder: str | os.PathLike[str], name: str) -> Path:
    """Return ``folder/name`` after checking that it cannot escape ``folder``."""
    base = Path(folder).resolve()
    target = (base / safe_filename(name)).resolve()
    if base != target.parent:
        raise InputError(str(folder), "", f"output name {name!r} would leave the folder")
    return target

"""What every ``vascplan demo`` step gets: :class:`DemoContext`."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from vascplan.fileio import atomic_write_bytes, atomic_write_text, output_inside


@dataclass
class DemoContext:
    """What a demo step gets: the output folder, the example files, a printer.

    Attributes
    ----------
    out_dir : Path
        Output folder (created on first write).
    examples : Path
        Folder of the bundled invented examples.
    echo : callable
        Prints one line for the user.
    written : list of Path
        Every file written so far, in order.
    shared : dict
        Results one step leaves for later ones (``shared["cases"]``: ref -> Case).
    """

    out_dir: Path
    examples: Path
    echo: Callable[[str], None]
    written: list[Path] = field(default_factory=list)
    shared: dict[str, Any] = field(default_factory=dict)

    def case_files(self) -> list[Path]:
        """The bundled case files (``examples/case-*.yaml``), sorted."""
        return sorted(self.examples.glob("case-*.yaml"))

    def say(self, text: str) -> None:
        """Print one line."""
        self.echo(text)

    def write_text(self, name: str, text: str) -> Path:
        """Write ``out_dir/name`` atomically (the name is made safe) and report it."""
        path = atomic_write_text(output_inside(self.out_dir, name), text)
        self.written.append(path)
        self.echo(f"  wrote {path}")
        return path

    def write_bytes(self, name: str, data: bytes) -> Path:
        """Write ``out_dir/name`` atomically (the name is made safe) and report it."""
        path = atomic_write_bytes(output_inside(self.out_dir, name), data)
        self.written.append(path)
        self.echo(f"  wrote {path}")
        return path


DemoStep = Callable[[DemoContext], None]

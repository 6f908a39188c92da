"""User-facing diagnostics in the GNU ``FILE:LINE:COL: error: message`` form.

Every mistake a user can make ends up as a :class:`Diagnostic`. Layers collect
them in a :class:`Diagnostics` list so that several independent errors are
reported in one run; :class:`InputError` carries them up to the CLI, which
prints them (with the source line and a caret) and exits with code 2.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import NamedTuple


class Loc(NamedTuple):
    """A place in a source file: 1-based line and column; ``width`` columns for the caret.

    A named tuple rather than a dataclass: the parser makes several per netlist
    line, and a tuple is built about twice as fast (immutable and hashable alike).
    """

    file: str
    line: int
    col: int
    width: int = 1

    def __str__(self) -> str:
        return f"{self.file}:{self.line}:{self.col}"


@dataclass(frozen=True)
class Diagnostic:
    severity: str  # "error" | "warning" | "note"
    loc: Loc | None
    message: str

    def format(self, sources: dict[str, str] | None = None) -> str:
        head = f"{self.loc}: " if self.loc else "portwise: "
        text = f"{head}{self.severity}: {self.message}"
        if self.loc and sources and self.loc.file in sources:
            lines = sources[self.loc.file].splitlines()
            if 1 <= self.loc.line <= len(lines):
                src = lines[self.loc.line - 1].rstrip("\n")
                # keep tabs so the caret lines up under the same characters
                pad = "".join(ch if ch == "\t" else " " for ch in src[: self.loc.col - 1])
                text += f"\n {src}\n {pad}^" + "~" * max(0, min(self.loc.width, 80) - 1)
        return text


class InputError(Exception):
    """Raised when the input cannot be processed; carries every diagnostic found."""

    def __init__(self, diagnostics: list[Diagnostic]):
        self.diagnostics = list(diagnostics)
        super().__init__("\n".join(d.format() for d in self.diagnostics))


MAX_REPORTED = 50  # errors listed per run; the rest are counted


@dataclass
class Diagnostics:
    """An accumulator: add errors and warnings, raise once at a checkpoint."""

    items: list[Diagnostic] = field(default_factory=list)

    def error(self, loc: Loc | None, message: str) -> None:
        self.items.append(Diagnostic("error", loc, message))

    def warning(self, loc: Loc | None, message: str) -> None:
        self.items.append(Diagnostic("warning", loc, message))

    @property
    def errors(self) -> list[Diagnostic]:
        return [d for d in self.items if d.severity == "error"]

    @property
    def warnings(self) -> list[Diagnostic]:
        return [d for d in self.items if d.severity == "warning"]

    def check(self) -> None:
        """Raise :class:`InputError` with everything collected if any error is present.

        After :data:`MAX_REPORTED` errors the rest are summed up in one note, so that
        a file of garbage gives a screenful, not a flood.
        """
        errors = self.errors
        if not errors:
            return
        if len(errors) > MAX_REPORTED:
            last = errors[MAX_REPORTED - 1]
            keep = self.items[: self.items.index(last) + 1]
            keep.append(Diagnostic("note", None, f"{len(errors) - MAX_REPORTED} more errors not shown"))
            raise InputError(keep)
        raise InputError(self.items)


def error(loc: Loc | None, message: str) -> InputError:
    """Build an :class:`InputError` holding a single error (``raise error(...)``)."""
    return InputError([Diagnostic("error", loc, message)])

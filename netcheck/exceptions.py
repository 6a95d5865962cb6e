"""The netcheck error tree, warnings and stable diagnostic codes."""

from __future__ import annotations

from dataclasses import dataclass

from .netlist.source import Span, format_caret, printable

__all__ = [
    "NetcheckError", "NetlistSyntaxError", "ElaborationError", "SpecError",
    "SingularCircuitError", "MeasurementError", "RenderError", "NetcheckWarning",
    "Diagnostic", "CODES", "INTERNAL_CODE",
]

#: Stable diagnostic codes. NC1xx netlist, NC2xx spec, NC3xx solve/measure, NC4xx output
#: and runs, NC5xx netcheck itself.
CODES: dict[str, str] = {
    "NC100": "netlist syntax error",
    "NC101": "bad value or expression",
    "NC102": "undefined parameter",
    "NC103": "recursive parameter definition",
    "NC104": "bad include",
    "NC105": "wrong element card",
    "NC106": "duplicate name",
    "NC107": "undefined subcircuit, element or source",
    "NC108": "wrong node count for a subcircuit",
    "NC109": "recursive subcircuit",
    "NC110": "zero or negative part value",
    "NC111": "floating sub-network",
    "NC112": "loop of voltage-defined elements",
    "NC113": "cut-set of current sources",
    "NC114": "bad coupling",
    "NC115": "unknown node",
    "NC116": "design over a size budget (elements, nesting depth)",
    "NC117": "input file unusable (not a regular file, too large, not UTF-8 text)",
    "NC118": "part value out of range (magnitude above 1e200 or below 1e-200)",
    "NC150": "unknown directive (warning)",
    "NC151": "probable milli/mega mix-up (warning)",
    "NC152": "node with one connection (warning)",
    "NC153": "stimulus has no AC value (warning)",
    "NC154": "part value off its preferred-number series (warning)",
    "NC200": "spec file error",
    "NC201": "unknown spec key",
    "NC202": "wrong type or value in spec",
    "NC203": "spec refers to something that does not exist",
    "NC204": "spec path leaves the design root",
    "NC205": "spec over a budget (sweep points, nesting, table rows, text length)",
    "NC250": "spec asks for an analysis with nothing to analyse (warning)",
    "NC300": "singular circuit",
    "NC301": "measurement could not be made",
    "NC302": "numerical trouble (warning)",
    "NC303": "circuit matrix or solution not finite (part values out of range)",
    "NC304": "no signal at the output (zero, or rounding noise, at every swept frequency)",
    "NC400": "could not write output",
    "NC401": "output refused (an input of the run, a device or FIFO, two outputs to -)",
    "NC402": "bad command-line value",
    "NC410": "git could not answer (--changed-since)",
    "NC411": "baseline result file is not usable",
    "NC420": "worker process lost (killed, or out of memory)",
    "NC421": "out of memory or recursion depth while checking",
    "NC500": "internal error in netcheck (a bug)",
}


#: the code of a result that a bug in netcheck cost (exit status 3)
INTERNAL_CODE = "NC500"
#: the most characters of a location or a message one formatted diagnostic shows
TEXT_MAX = 1000


class NetcheckError(Exception):
    """Base of every user-facing netcheck error.

    Parameters
    ----------
    message : str
        What went wrong, in the user's terms.
    span : Span, optional
        Where in which file.
    code : str, optional
        Stable diagnostic code (class default if omitted).
    where : str, optional
        A location that is not a span (a spec key path such as ``limits[3].band``).
    """

    code = "NC000"

    def __init__(self, message: str, span: Span | None = None, code: str | None = None,
                 where: str | None = None, path: str | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.span = span
        self.where = where
        self.path = path
        if code is not None:
            self.code = code

    def location(self) -> str:
        """``file:line:col`` (or ``file`` / ``file: key.path``) of the error."""
        if self.span is not None:
            return str(self.span)
        if self.path and self.where:
            # messages that already start with their key path need it only once
            return self.path if self.message.startswith(self.where) else \
                f"{self.path}: {self.where}"
        return self.path or self.where or "netcheck"

    def format(self) -> str:
        """Compiler-style message: location, code, message, source line and caret.

        Text from input files (the path, names quoted in the message, the source line)
        is shown through :func:`netcheck.netlist.source.printable` and bounded, so it cannot act
        on a terminal or flood it.
        """
        head = (f"{printable(self.location(), TEXT_MAX)}: error {self.code}: "
                f"{printable(self.message, TEXT_MAX)}")
        if self.span is not None:
            caret = format_caret(self.span)
            if caret:
                return f"{head}\n{caret}"
        return head

    def __str__(self) -> str:
        return self.format()


class NetlistSyntaxError(NetcheckError, ValueError):
    """The netlist text does not follow the card grammar."""

    code = "NC100"


class ElaborationError(NetcheckError, ValueError):
    """The netlist parses but does not describe a valid circuit."""

    code = "NC105"


class SpecError(NetcheckError, ValueError):
    """A spec file is malformed or refers to things that do not exist."""

    code = "NC200"


class SingularCircuitError(NetcheckError, ArithmeticError):
    """The MNA system cannot be solved at some frequency."""

    code = "NC300"


class MeasurementError(NetcheckError, ArithmeticError):
    """A requested measurement cannot be made on the response."""

    code = "NC301"


class RenderError(NetcheckError, OSError):
    """An output file could not be written."""

    code = "NC400"


class NetcheckWarning(UserWarning):
    """Numerical trouble that does not stop the analysis."""


@dataclass(frozen=True, slots=True)
class Diagnostic:
    """A non-fatal finding (lint warning) with its position."""

    code: str
    message: str
    span: Span | None = None
    severity: str = "warning"

    def format(self) -> str:
        """Compiler-style text, like :meth:`NetcheckError.format` (escaped, bounded)."""
        where = str(self.span) if self.span is not None else "netcheck"
        head = (f"{printable(where, TEXT_MAX)}: {self.severity} {self.code}: "
                f"{printable(self.message, TEXT_MAX)}")
        if self.span is not None:
            caret = format_caret(self.span)
            if caret:
                return f"{head}\n{caret}"
        return head

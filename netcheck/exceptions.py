"""The netcheck error tree, warnings and stable diagnostic codes."""

from __future__ import annotations

from dataclasses import dataclass

from .netlist.source import Span, display_path, format_caret, printable

__all__ = [
    "NetcheckError", "NetlistSyntaxError", "ElaborationError", "SpecError",
    "SingularCircuitError", "MeasurementError", "OperatingPointError", "RenderError", "NetcheckWarning",
    "Diagnostic", "CODES", "INTERNAL_CODE",
]

#: Stable diagnostic codes, ``<stage>-<number>``: the stage that found the problem
#: (``netlist``, ``spec``, ``analysis`` for solving and measuring, ``run`` for outputs, the
#: command line and batch runs, ``internal`` for netcheck itself) and a number that keeps
#: its hundreds per stage. Earlier versions wrote ``NC<number>`` (docs/errors.md).
CODES: dict[str, str] = {
    "netlist-100": "netlist syntax error",
    "netlist-101": "bad value or expression",
    "netlist-102": "undefined parameter",
    "netlist-103": "recursive parameter definition",
    "netlist-104": "bad include",
    "netlist-105": "wrong element card",
    "netlist-106": "duplicate name",
    "netlist-107": "undefined subcircuit, element or source",
    "netlist-108": "wrong node count for a subcircuit",
    "netlist-109": "recursive subcircuit",
    "netlist-110": "zero or negative part value",
    "netlist-111": "floating sub-network",
    "netlist-112": "loop of voltage-defined elements",
    "netlist-113": "cut-set of current sources",
    "netlist-114": "bad coupling",
    "netlist-115": "unknown node",
    "netlist-116": "design over a size budget (elements, nesting depth)",
    "netlist-117": "input file unusable (not a regular file, too large, not UTF-8 text)",
    "netlist-118": "part value out of range (magnitude above 1e200 or below 1e-200)",
    "netlist-120": "construct netcheck does not solve (a device, switch, behavioural model, placeholder)",
    "netlist-130": "model card unusable (no name or type, unknown parameter, wrong kind)",
    "netlist-131": "bad transmission line (missing or non-positive Z0, delay or length)",
    "netlist-132": "device model parameter out of range",
    "netlist-133": "device parameter or option read and not modelled (note)",
    "netlist-150": "unknown directive (warning)",
    "netlist-151": "probable milli/mega mix-up (warning)",
    "netlist-152": "node with one connection (warning)",
    "netlist-153": "stimulus has no AC value (warning)",
    "netlist-154": "part value off its preferred-number series (warning)",
    "netlist-155": "card for another analysis ignored (warning)",
    "netlist-156": "transient source function ignored (warning)",
    "netlist-157": "title line looks like a card (warning)",
    "netlist-158": "file read as Latin-1, not UTF-8 (warning)",
    "netlist-159": "include path resolved (Windows separators, letter case) (warning)",
    "netlist-160": "initial condition ignored (note)",
    "netlist-161": "floating port of a transmission line tied to the other port's reference (note)",
    "netlist-162": "E … OPAMP read as an ideal op-amp (note)",
    "netlist-163": ".lib sections of a file that no .lib card selects, not read (note)",
    "netlist-164": "sweep taken from the netlist's .ac card (note)",
    "netlist-165": ".temp read: the temperature of the parts' TC1/TC2 and the devices (note)",
    "netlist-166": "device model cannot be taken to the temperature of the check",
    "spec-200": "spec file error",
    "spec-201": "unknown spec key",
    "spec-202": "wrong type or value in spec",
    "spec-203": "spec refers to something that does not exist",
    "spec-204": "spec path leaves the design root",
    "spec-205": "spec over a budget (sweep points, nesting, table rows, text length)",
    "spec-270": "part tolerance malformed (asymmetric ends, tolerance table)",
    "spec-271": "tracking group malformed or matching no toleranced parts",
    "spec-272": "tracking group mixing distributions below full correlation",
    "spec-273": ".param tolerance that cannot be applied",
    "spec-274": "element toleranced twice (its own tolerance and a toleranced .param)",
    "spec-275": "temperature range or temperature coefficient malformed",
    "spec-280": "notch limit that cannot be judged as written",
    "spec-281": "bad notch depth reference",
    "spec-282": "bad relative Q (nominal with tolerance)",
    "spec-283": "bad deviation-from-linear-phase limit",
    "spec-284": "bad relative group-delay variation",
    "spec-250": "spec asks for an analysis with nothing to analyse (warning)",
    "spec-260": "gain reference of a limit incomplete or contradictory",
    "spec-261": "measured anchor frequency of a limit incomplete or contradictory",
    "spec-262": "sloped gain bound malformed",
    "spec-263": "frequency of a gain limit given twice or outside the sweep",
    "spec-264": "shape factor levels malformed",
    "spec-265": "named outputs ([outputs]) malformed or contradictory",
    "spec-266": "a limit names an output the spec does not have",
    "spec-267": "crossover limit malformed",
    "analysis-300": "singular circuit",
    "analysis-301": "measurement could not be made",
    "analysis-302": "numerical trouble (warning)",
    "analysis-303": "circuit matrix or solution not finite (part values out of range)",
    "analysis-304": "no signal at the output (zero, or rounding noise, at every swept frequency)",
    "analysis-305": "analysis not available for a circuit with a transmission line",
    "analysis-306": "DC operating point not found",
    "analysis-307": "device outside its usual region at the operating point (warning)",
    "analysis-308": "(no longer raised) tolerance analyses on a circuit with devices",
    "analysis-309": "circuit unstable at its DC operating point (warning)",
    "analysis-310": "behavioural expression has no value at the DC operating point",
    "analysis-311": "DC operating point of a sample not found",
    "run-400": "could not write output",
    "run-401": "output refused (an input of the run, a device or FIFO, two outputs to -)",
    "run-402": "bad command-line value",
    "run-410": "git could not answer (--affected-since)",
    "run-411": "earlier result file is not usable (--compare-margins)",
    "run-420": "worker process lost (killed, or out of memory)",
    "run-421": "out of memory or recursion depth while checking",
    "internal-500": "internal error in netcheck (a bug)",
}


#: the code of a result that a bug in netcheck cost (exit status 3)
INTERNAL_CODE = "internal-500"
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

    code = "internal-000"

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
        if self.span is not None:  # the path as a reader wants it (a/../b folded)
            return f"{display_path(self.span.source.path)}:{self.span.line}:{self.span.column}"
        path = display_path(self.path) if self.path else self.path
        if path and self.where:
            # messages that already start with their key path need it only once
            return path if self.message.startswith(self.where) else f"{path}: {self.where}"
        return path or self.where or "netcheck"

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

    code = "netlist-100"


class ElaborationError(NetcheckError, ValueError):
    """The netlist parses but does not describe a valid circuit."""

    code = "netlist-105"


class SpecError(NetcheckError, ValueError):
    """A spec file is malformed or refers to things that do not exist."""

    code = "spec-200"


class SingularCircuitError(NetcheckError, ArithmeticError):
    """The MNA system cannot be solved at some frequency."""

    code = "analysis-300"


class MeasurementError(NetcheckError, ArithmeticError):
    """A requested measurement cannot be made on the response."""

    code = "analysis-301"


class OperatingPointError(NetcheckError, ArithmeticError):
    """The DC operating point of a circuit with devices cannot be found."""

    code = "analysis-306"


class RenderError(NetcheckError, OSError):
    """An output file could not be written."""

    code = "run-400"


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

"""gerbonara's RS-274X parser, fixed by a subclass (never a monkeypatch).

What this subclass changes, each pinned by a test in tests/fab/test_gerber_parser.py:

* step-and-repeat (SR) blocks are expanded (gerbonara 1.6.3 tests an empty list for truth and so
  never collects the block; it also offsets copies in mm whatever the file unit);
* regions carry the X2 object attributes (.N, .C, .P ...) and the aperture attributes
  (.AperFunction) current when the region starts;
* attributes written as ``G04 #@! TF/TA/TO/TD`` comments are read like the extended commands;
* LM / LR / LS (aperture mirroring, rotation, scaling) are read and recorded on every flash and
  draw (``obj._sc_xform``); the geometry step applies them;
* AB (block apertures) are implemented: a block is captured and every flash of it places copies;
  blocks flashed inside a block stay flashes until the outer block is placed, and each block
  knows how many objects it places, so a nested-block bomb is refused before anything is copied;
* the objects made by copying (block flashes, step-and-repeat) are counted against
  ``limits.max_expanded_objects`` before they are made: a file of a few bytes cannot place
  millions of objects whose geometry would take minutes (``ParseResult.expanded_objects``);
* a file without M02 is refused as truncated; incremental notation, a missing unit or coordinate
  format, unknown statements and binary data are refused with the line;
* deprecated constructs of known meaning (Gerber spec 2023.08 chapter 8) are read with a warning
  naming the file, line and construct, or refused when strict (:mod:`sensorcheck.fab.dialect`):
  the image commands AS/MI/SF/OF/IR/RO/IP (kept out of gerbonara's coordinate mapping and applied
  to the whole image afterwards: :class:`ImageTransform`), IN/LN, several G codes in one command,
  coordinate words out of order, coordinates without a D code, an AD before MO, a mid-file MO
  change, NUL padding after the last command; arcs with non-circular apertures in the geometry;
* aperture macros are parsed by our own small parser (gerbonara's goes through ``ast`` for every
  number, which was three quarters of its parse time on real files, and prints a debug line to
  stdout for every macro polygon);
* every object carries the 1-based line of the command that made it (``obj._sc_line``).

Nothing here knows about shapely; :mod:`sensorcheck.fab.gerber_geometry` converts the objects.
"""

from __future__ import annotations

import copy
import dataclasses
import math
import re
from dataclasses import dataclass, field
from typing import Any, Callable

from gerbonara import graphic_objects as go
from gerbonara.rs274x import GerberFile, GerberParser, GraphicsState
from gerbonara.utils import MM, Inch, InterpMode

from sensorcheck.errors import InputError, LimitError
from sensorcheck.fab.dialect import DialectLog, line_of, strip_padding
from sensorcheck.limits import DEFAULT_LIMITS, Limits

#: identity aperture transformation: (mirror x, mirror y, rotation in degrees ccw, scale)
IDENTITY_XFORM: tuple[bool, bool, float, float] = (False, False, 0.0, 1.0)


# --------------------------------------------------------------------------------------------
# aperture macros (our own parser and evaluator)
# --------------------------------------------------------------------------------------------

_TOKEN_RX = re.compile(r"\s*(?:(?P<num>\d+\.?\d*(?:[eE][+-]?\d+)?|\.\d+)|\$(?P<var>\d+)|(?P<op>[-+xX/()]))")


def _tokenize(expr: str) -> list[tuple[str, Any]]:
    tokens: list[tuple[str, Any]] = []
    pos = 0
    expr = expr.strip()
    while pos < len(expr):
        m = _TOKEN_RX.match(expr, pos)
        if m is None or m.end() == pos:
            raise ValueError(f"cannot read the macro expression {expr!r} at {expr[pos:]!r}")
        if m["num"] is not None:
            tokens.append(("num", float(m["num"])))
        elif m["var"] is not None:
            tokens.append(("var", int(m["var"])))
        else:
            op = m["op"]
            tokens.append(("op", "x" if op == "X" else op))
        pos = m.end()
    return tokens


def _compile_expression(expr: str) -> Callable[[dict[int, float]], float]:
    """Compile a macro arithmetic expression (+ - x / unary minus, parentheses, $n) to a function.

    Gerber spec 2023.08 section 4.5.4.2 (arithmetic expressions): precedence of x and / over + and -.
    """
    tokens = _tokenize(expr)
    pos = 0

    def peek() -> tuple[str, Any] | None:
        return tokens[pos] if pos < len(tokens) else None

    def take() -> tuple[str, Any]:
        nonlocal pos
        tok = tokens[pos]
        pos += 1
        return tok

    def factor() -> Callable[[dict[int, float]], float]:
        tok = peek()
        if tok is None:
            raise ValueError(f"macro expression {expr!r} ends too early")
        kind, val = take()
        if kind == "num":
            return lambda v, c=val: c
        if kind == "var":
            return lambda v, n=val: v.get(n, 0.0)
        if val == "-":
            inner = factor()
            return lambda v: -inner(v)
        if val == "+":
            return factor()
        if val == "(":
            inner = sum_()
            if take() != ("op", ")"):
                raise ValueError(f"missing ')' in macro expression {expr!r}")
            return inner
        raise ValueError(f"unexpected {val!r} in macro expression {expr!r}")

    def term() -> Callable[[dict[int, float]], float]:
        left = factor()
        while (tok := peek()) is not None and tok[0] == "op" and tok[1] in ("x", "/"):
            take()
            right = factor()
            if tok[1] == "x":
                left = (lambda a, b: lambda v: a(v) * b(v))(left, right)
            else:
                left = (lambda a, b: lambda v: a(v) / b(v))(left, right)
        return left

    def sum_() -> Callable[[dict[int, float]], float]:
        left = term()
        while (tok := peek()) is not None and tok[0] == "op" and tok[1] in ("+", "-"):
            take()
            right = term()
            if tok[1] == "+":
                left = (lambda a, b: lambda v: a(v) + b(v))(left, right)
            else:
                left = (lambda a, b: lambda v: a(v) - b(v))(left, right)
        return left

    fn = sum_()
    if pos != len(tokens):
        raise ValueError(f"unexpected {tokens[pos][1]!r} in macro expression {expr!r}")
    return fn


def _argument(text: str) -> float | Callable[[dict[int, float]], float]:
    try:
        return float(text)
    except ValueError:
        return _compile_expression(text)


#: most significant digits in a coordinate: the coordinate format has at most 6 + 6 digits
_MAX_COORD_DIGITS = 13
#: largest aperture parameter (size in mm or inch, angle, vertex count): 10 m is no board's aperture
_MAX_APERTURE_PARAM = 10_000.0
#: largest LS aperture scale factor accepted (spec 4.9.5 allows any positive factor; a factor over
#: 1000 turns a 0.1 mm pen into one wider than 10 cm: a broken or hostile file, never a board)
_MAX_APERTURE_SCALE = 1000.0


@dataclass(frozen=True, slots=True)
class MacroStatement:
    #: "primitive" (code + args) or "assign" (variable number + one expression)
    kind: str
    code: int
    args: tuple[Any, ...]


@dataclass(frozen=True, slots=True)
class MacroDefinition:
    """An AM aperture macro as written: its statements, arguments not yet evaluated."""

    name: str
    statements: tuple[MacroStatement, ...]

    @classmethod
    def parse(cls, name: str, body: str) -> "MacroDefinition":
        statements: list[MacroStatement] = []
        for raw in body.split("*"):
            text = "".join(raw.split())  # whitespace and line breaks inside a statement mean nothing
            if not text:
                continue
            if text.startswith("0") and (len(text) == 1 or not text[1].isdigit()):
                continue  # comment primitive (code 0)
            if text.startswith("$"):
                var, _, expr = text[1:].partition("=")
                if not var.isdigit() or not expr:
                    raise ValueError(f"macro {name}: cannot read the variable definition {raw.strip()!r}")
                statements.append(MacroStatement("assign", int(var), (_compile_expression(expr),)))
                continue
            parts = text.split(",")
            try:
                code = int(parts[0])
            except ValueError:
                raise ValueError(f"macro {name}: unknown primitive {parts[0]!r}") from None
            if code not in (1, 2, 20, 21, 22, 4, 5, 6, 7):
                raise ValueError(f"macro {name}: unknown primitive code {code}")
            statements.append(MacroStatement("primitive", code, tuple(_argument(p) for p in parts[1:])))
        return cls(name, tuple(statements))

    def evaluate(self, parameters: tuple[float, ...]) -> tuple[tuple[int, tuple[float, ...]], ...]:
        """Primitives with every argument evaluated for one AD's parameters ($1 = first)."""
        variables = {i + 1: float(p) for i, p in enumerate(parameters)}
        out: list[tuple[int, tuple[float, ...]]] = []
        for st in self.statements:
            if st.kind == "assign":
                variables[st.code] = float(st.args[0](variables))
            else:
                out.append(
                    (st.code, tuple(a if isinstance(a, float) else float(a(variables)) for a in st.args))
                )
        return tuple(out)


@dataclass(frozen=True, slots=True, eq=False)
class MacroAperture:
    """An AD of an aperture macro: the evaluated primitives (in the file unit)."""

    name: str
    parameters: tuple[float, ...]
    primitives: tuple[tuple[int, tuple[float, ...]], ...]
    unit: Any
    attrs: tuple = ()
    original_number: int | None = None

    def equivalent_width(self, unit: Any = None) -> float:
        # only used by gerbonara for a warning on D01; draws with macros are refused in geometry
        return float("nan")


@dataclass(frozen=True, slots=True, eq=False)
class StandardAperture:
    """A standard aperture C, R, O or P (Gerber spec 2023.08 section 4.4), sizes in the file unit.

    ``params`` as written: C: diameter[, hole]; R and O: x size, y size[, hole]; P: outer diameter,
    vertices[, rotation degrees[, hole]].  A hole given by two numbers is the rectangular hole of
    older revisions of the specification (x size, y size).
    """

    shape: str
    params: tuple[float, ...]
    unit: Any
    attrs: tuple = ()
    original_number: int | None = None

    @property
    def hole(self) -> tuple[float, ...]:
        """Hole parameters as written: () none, (d,) round, (x, y) rectangular (older revisions)."""
        return self.params[{"C": 1, "R": 2, "O": 2, "P": 3}[self.shape]:]

    def equivalent_width(self, unit: Any = None) -> float:
        if self.shape == "C":
            return self.params[0]
        if self.shape == "P":
            return self.params[0]
        return min(self.params[0], self.params[1])


@dataclass(frozen=True, slots=True, eq=False)
class BlockAperture:
    """An AB block aperture: the objects of the block, relative to the block origin.

    Flashes of other blocks inside the block are kept as flashes (not expanded) until the block
    is placed outside any block definition; ``expanded_count`` is the number of objects the block
    places then (its own objects plus, for each block it flashes, that block's count), so that a
    flash can be checked against ``limits.max_gerber_objects`` before anything is copied.
    """

    objects: tuple[Any, ...]
    unit: Any
    attrs: tuple = ()
    original_number: int | None = None
    expanded_count: int = 0

    def equivalent_width(self, unit: Any = None) -> float:
        raise ValueError("a block aperture (AB) cannot be used to draw (D01), only to flash (D03)")


def _moved_copy(obj: Any, dx: float, dy: float) -> Any:
    """A shallow copy of a gerbonara object moved by (dx, dy) in its own unit.

    What ``copy.copy(obj)`` then ``obj.offset(dx, dy, unit=obj.unit)`` do (every ``_offset`` of
    gerbonara 1.6.3 rebinds its coordinates, none changes a shared list), four times faster:
    block and step-and-repeat expansion make up to limits.max_gerber_objects of these.
    """
    new = object.__new__(type(obj))
    new.__dict__.update(obj.__dict__)
    new._offset(dx, dy)
    return new


# --------------------------------------------------------------------------------------------
# the parser subclass
# --------------------------------------------------------------------------------------------

_DECIMAL = r"[\+-]?(?:\d+\.?\d*|\.\d+)"

# statements some generators write that mean nothing for the image (kept, with a warning)
_HARMLESS_UNKNOWN = re.compile(r"^(?:IPPOS|IPNEG|INV?.*|LN.*|G90|M01|G04.*|ICAS|AS.*|MI.*|SF.*|OF.*|IR.*)$")

# a mode G code followed by another G code in one command (RS-274-D blocks)
_LEADING_MODE_G = re.compile(r"^(?P<code>G0?[123]|G7[0145]|G9[01]|G3[67])(?=G)")
# a coordinate statement: optional G code, X/Y/I/J words in any order, optional D code
_WORDS = re.compile(r"^(?P<g>G0?[123]|G5[45])?(?P<words>(?:[XYIJ][+-]?\d+)+)(?P<d>D0?[123])?$")
_WORD = re.compile(r"[XYIJ][+-]?\d+")
_SEQUENCE_NUMBER = re.compile(r"^N\d+(?P<rest>.*)$", re.DOTALL)
_DECIMAL_COORD = re.compile(r"^(?=[^.]*\.)(?:G\d+)?(?:[XYIJ][+-]?[\d.]+)+(?:D0?[123])?$")

# gerbonara's warnings, said the way a board designer reads them
_WARNING_WORDS = [
    ("D01 interpolation with a zero-size aperture", "a draw with a zero-size aperture adds nothing to the image"),
    ("Deprecated G74", "single-quadrant arc mode (G74, deprecated since 2021)"),
    ("Deprecated G90", "G90 (absolute notation, deprecated statement)"),
    ("Circular arc interpolation without explicit G75",
     "arc without G74/G75 before it: read as multi-quadrant (G75)"),
    ("Coordinate omitted from first coordinate statement",
     "the first coordinate statement omits X or Y: taken as 0"),
]

_ATTRIBUTE_RX = re.compile(
    r"(?P<eagle_garbage>)(?P<type>TF|TA|TO|TD)(?P<name>[._$a-zA-Z][._$a-zA-Z0-9]*)?(,(?P<value>.*))?$", re.DOTALL
)


@dataclass
class ParseResult:
    """What :func:`parse_gerber_text` returns: gerbonara objects annotated with our fixes."""

    gerber: GerberFile
    units: str  # "mm" | "inch"
    #: the smallest coordinate step the file can write (from FS and MO), in mm
    resolution_mm: float
    file_attributes: dict[str, list[str]]
    warnings: list[str] = field(default_factory=list)
    comments: list[str] = field(default_factory=list)
    #: objects made by copying (block flashes, step-and-repeat), held to limits.max_expanded_objects
    expanded_objects: int = 0
    #: the deprecated image-wide commands (AS, MI, SF, OF, IR, RO, IP), applied to the final geometry
    image: "ImageTransform" = field(default_factory=lambda: ImageTransform())
    #: deprecated constructs read with a warning (or refused when strict); shares ``warnings``
    dialect: DialectLog = field(default_factory=lambda: DialectLog(""))


@dataclass(slots=True)
class ImageTransform:
    """The deprecated image-wide commands of a file (Gerber spec 2023.08 section 8.1).

    They apply to the whole image, aperture shapes included (a mirrored film mirrors the pads
    too), so they are applied to the final geometry, in this order (gerbonara 1.6.3's
    ``GraphicsState._update_xform`` order, which rotates the offset with the image): axis swap
    (AS), mirror (MI), scale (SF), offset (OF), rotation (IR and the older RO, counter-clockwise
    about the origin). A negative image (IPNEG) is the box of the objects with the objects cut
    out of it.
    """

    swap_axes: bool = False
    mirror_a: bool = False
    mirror_b: bool = False
    scale_a: float = 1.0
    scale_b: float = 1.0
    #: offset as written and the unit it is written in (None: the file's unit once set)
    offset: tuple[float, float] = (0.0, 0.0)
    offset_unit: Any = None
    rotation_deg: float = 0.0
    negative: bool = False

    def is_identity(self) -> bool:
        return (not self.swap_axes and not self.mirror_a and not self.mirror_b and self.scale_a == 1.0
                and self.scale_b == 1.0 and self.offset == (0.0, 0.0) and self.rotation_deg % 360 == 0)


class SensorcheckGraphicsState(GraphicsState):
    """gerbonara's graphics state with the single-quadrant (G74) arc centre chosen per the spec.

    Gerber spec 2023.08 section 4.7.2 (single-quadrant mode, kept for older files): I and J are
    unsigned; the centre is the one of the four sign choices that makes an arc of at most 90
    degrees in the given direction; start = end is an arc of zero length (the aperture at the
    point). gerbonara 1.6.3 picks by a numeric-error sort that can choose the wrong centre and
    draws nothing for start = end.
    """

    def interpolate(self, x: Any, y: Any, i: Any = None, j: Any = None, aperture: bool = True,
                    multi_quadrant: bool = False) -> Any:
        # gerbonara's flag "multi_quadrant" is True after G74, which is the single-quadrant mode
        if not multi_quadrant or self.interpolation_mode == InterpMode.LINEAR or (i is None and j is None):
            return super().interpolate(x, y, i, j, aperture, multi_quadrant)
        if self.unit is None:
            raise SyntaxError("Gerber file does not contain a unit definition.")
        ap = self.aperture if aperture else None
        if aperture and ap is None:
            raise SyntaxError("Interpolation attempted without selecting aperture first")
        old_point = self.map_coord(*self.update_point_native(x, y))
        new_point = self.map_coord(*self.point)
        kw = dict(polarity_dark=self._polarity_dark, unit=self.unit, attrs=copy.copy(self.object_attrs))
        if math.isclose(old_point[0], new_point[0], abs_tol=1e-12) and \
                math.isclose(old_point[1], new_point[1], abs_tol=1e-12):
            return go.Line(*old_point, *new_point, ap, **kw)
        clockwise = self.interpolation_mode == InterpMode.CIRCULAR_CW
        i, j = abs(i or 0.0), abs(j or 0.0)
        best: tuple[float, float, float] | None = None
        for si in (1, -1):
            for sj in (1, -1):
                cx, cy = self.map_coord(si * i, sj * j, relative=True)
                ax, ay = old_point[0] + cx, old_point[1] + cy
                r1 = math.hypot(old_point[0] - ax, old_point[1] - ay)
                r2 = math.hypot(new_point[0] - ax, new_point[1] - ay)
                a1 = math.atan2(old_point[1] - ay, old_point[0] - ax)
                a2 = math.atan2(new_point[1] - ay, new_point[0] - ax)
                sweep = (a1 - a2) if clockwise else (a2 - a1)
                sweep %= 2 * math.pi
                if sweep > math.pi / 2 + 1e-6:
                    continue
                err = abs(r1 - r2)
                if best is None or err < best[0]:
                    best = (err, cx, cy)
        if best is None:
            raise SyntaxError("single-quadrant arc (G74) with no centre giving an arc of 90 degrees or less")
        return go.Arc(*old_point, *new_point, best[1], best[2], clockwise=clockwise, aperture=ap, **kw)


class SensorcheckGerberParser(GerberParser):
    """gerbonara's parser with the fixes listed in the module docstring."""

    STATEMENT_REGEXES = {
        "coord": GerberParser.STATEMENT_REGEXES["coord"],
        "aperture_block": r"^AB(?:D(?P<number>\d+))?$",
        "aperture_mirroring": r"^LM(?P<mirror>N|XY|X|Y)$",
        "aperture_rotation": fr"^LR(?P<angle>{_DECIMAL})$",
        "aperture_scaling": fr"^LS(?P<scale>{_DECIMAL})$",
        "layer_rotation": fr"^ROA?(?P<angle>{_DECIMAL})$",
        **{k: v for k, v in GerberParser.STATEMENT_REGEXES.items() if k != "coord"},
    }

    def __init__(self, target: GerberFile, name: str, limits: Limits = DEFAULT_LIMITS, *, strict: bool = False) -> None:
        super().__init__(target, include_dir=None)
        self.graphics_state = SensorcheckGraphicsState(warn=self.warn, file_settings=self.file_settings)
        self.sc_name = name
        self.sc_limits = limits
        self.sc_dialect = DialectLog(name, strict)
        self.sc_warnings: list[str] = self.sc_dialect.warnings  # one list, in file order
        self.sc_image = ImageTransform()
        # apertures defined before the unit (deprecated order): given the unit once it is set
        self.sc_unitless: list[tuple[int, int]] = []  # (D-code, line)
        self.sc_last_op: str | None = None  # the last D01/D02/D03 written ("1", "2", "3")
        self._coord_rx = re.compile(self.STATEMENT_REGEXES["coord"])
        self.sc_xform: tuple[bool, bool, float, float] = IDENTITY_XFORM
        self.sc_sr: tuple[int, int, float, float, int, int] | None = None  # x, y, i, j, start, line
        self.sc_blocks: list[tuple[int, int, int]] = []  # (D-code, start index, line)
        # objects in target.objects that are unexpanded block flashes (inside an open block) stand
        # for aperture.expanded_count objects: this is the sum of (count - 1) over them, so that
        # len(target.objects) + sc_extra is the object count after expansion
        self.sc_extra = 0
        # objects made by copying so far (block flashes placed, step-and-repeat copies), held to
        # limits.max_expanded_objects before each copy is made
        self.sc_expanded = 0
        self.sc_region_line: int | None = None

    # ---- errors and warnings -------------------------------------------------------------

    def error(self, message: str, expected: str | None = None, line: int | None = None) -> InputError:
        return InputError(self.sc_name, line if line is not None else self.lineno, message, expected)

    def warn(self, msg: str, kls: type = SyntaxWarning) -> None:  # noqa: ARG002 - gerbonara's signature
        for prefix, ours in _WARNING_WORDS:
            if msg.startswith(prefix):
                msg = ours
                break
        self.sc_warnings.append(f"{self.sc_name}:{self.lineno}: {msg}")

    # ---- main loop ---------------------------------------------------------------------------

    def parse(self, data: str, filename: str | None = None) -> None:  # type: ignore[override]
        self.filename = filename or self.sc_name
        dispatch = [(re.compile(exp), getattr(self, f"_parse_{name}")) for name, exp in self.STATEMENT_REGEXES.items()]
        objects = self.target.objects
        max_objects = self.sc_limits.max_gerber_objects
        after_eof = False
        for cmd in self._split_commands(data):
            if self.eof_found:
                after_eof = True
                break
            for part in self._statements(cmd):
                n_before = len(objects)
                if not self._dispatch(part, dispatch):
                    self._older_form(part, dispatch)
                if len(objects) != n_before:
                    self._tag_new(n_before)
                    if len(objects) + self.sc_extra > max_objects:
                        raise self._too_many_objects()
        last_line = data.count("\n") + (0 if data.endswith("\n") else 1)
        if after_eof:
            self.sc_warnings.append(f"{self.sc_name}: data after M02 ignored")
        if self.sc_blocks:
            raise self.error("block aperture (AB) not closed", "%AB*% closing the block", line=last_line)
        if self.current_region is not None and not self.eof_found:
            raise self.error("file ends inside a region (G36 without G37): truncated?",
                             "G37 and M02 at the end of the file", line=last_line)
        if not self.eof_found:
            raise self.error("file ends without M02: truncated?", "M02* as the last command", line=last_line)
        if self.sc_unitless:
            number, line = self.sc_unitless[0]
            raise self.error(f"aperture D{number} is defined but the file never sets a unit",
                             "%MOMM*% or %MOIN*% in the header", line=line)
        if self.sc_sr is not None:
            self._close_step_repeat()
            self._tag_new(len(objects))
        self.target.import_settings = self.file_settings
        self.target.unit = self.file_settings.unit
        self.target.file_attrs = self.file_attrs
        self.target.original_path = self.filename

    def _dispatch(self, part: str, dispatch: list[tuple[re.Pattern[str], Callable[[re.Match[str]], None]]]) -> bool:
        """Run the handler of the first statement pattern ``part`` matches; False when none does."""
        for rx, fun in dispatch:
            m = rx.match(part)
            if m is not None:
                self._call(fun, m)
                return True
        return False

    def _older_form(self, part: str, dispatch: list[tuple[re.Pattern[str], Callable[[re.Match[str]], None]]]) -> None:
        """A statement no pattern reads: an older form of known meaning (with a warning), else refused."""
        seq = _SEQUENCE_NUMBER.match(part)
        if seq is not None:
            # RS-274-D block sequence numbers (N<n>): they number blocks, nothing else
            self.sc_dialect.accept(self.lineno, "N sequence number", f"{part[:30]!r} starts with a sequence number",
                                   "the number is ignored", "no N codes (RS-274X)")
            for sub in self._statements(seq["rest"]) if seq["rest"] else ():
                if not self._dispatch(sub, dispatch):
                    self._older_form(sub, dispatch)
            return
        if any(ch.isspace() for ch in part):
            squeezed = "".join(part.split())
            self.sc_dialect.accept(self.lineno, "spaces inside a command", f"{part[:30]!r} holds spaces or line breaks",
                                   "read without them", "no whitespace inside a command")
            if not self._dispatch(squeezed, dispatch):
                self._older_form(squeezed, dispatch)
            return
        fixed = self._reordered(part)
        if fixed is not None:
            self._call(self._parse_coord, dispatch[0][0].match(fixed))
        elif _DECIMAL_COORD.match(part):
            # no reading is agreed: the FS format says integers, a point says otherwise
            raise self.error(f"coordinate with a decimal point {self._shorten_line()!r}",
                             "integer coordinates in the %FS format (spec section 4.2.2)")
        elif _HARMLESS_UNKNOWN.match(part):
            self.warn(f"statement {self._shorten_line()!r} ignored (it does not change the image)")
        else:
            raise self.error(f"unknown statement {self._shorten_line()!r}", "a Gerber (RS-274X) command")

    def _call(self, fun: Callable[[re.Match[str]], None], m: re.Match[str] | None) -> None:
        """Run one statement's handler; gerbonara's SyntaxError/ValueError/... become ours, with the line."""
        try:
            fun(m)  # type: ignore[arg-type]
        except InputError:
            raise
        except Exception as exc:
            raise self.error(f"cannot read {self._shorten_line()!r}: {exc}", "a valid Gerber (RS-274X) command") from exc

    def _statements(self, cmd: str) -> list[str]:
        """One command as the statements it holds, for the older RS-274-D word order.

        * ``G75G03I150J0X3550Y1701D01``: RS-274-D blocks hold several codes; a mode G code
          (G01-G03, G74/G75, G70/G71, G90/G91, G36/G37) before another G code is its own statement
          (Gerber spec 2023.08 section 8.3.1 deprecates even G01-G03 with D01 in one command);
        Read with a warning (refused when strict); :meth:`_reordered` does the same for coordinate
        words in another order than X, Y, I, J.
        """
        if "*" in cmd and not cmd.startswith("AM"):
            # several parameters in one %...% block ("%FSLAX24Y24*MOIN*%", "%SFA1B1*ASAXBY*%"),
            # which RS-274X allowed from the start: each read in turn (a macro's '*' are its own)
            return [p for part in cmd.split("*") if part.strip() for p in self._statements(part.strip())]
        if cmd[:1] != "G" or "G" not in cmd[1:]:
            return [cmd]  # the common case, kept cheap
        parts: list[str] = []
        rest = cmd
        while (m := _LEADING_MODE_G.match(rest)) is not None:
            parts.append(m["code"])
            rest = rest[m.end("code"):]
        if parts:
            self.sc_dialect.accept(self.lineno, "several G codes in one command",
                                   f"{cmd[:40]!r} combines {len(parts) + 1} codes",
                                   "each code read in turn, as an RS-274-D block",
                                   "one G code per command (e.g. G75*G03X..Y..I..J..D01*)")
        parts.append(rest)
        return parts

    def _reordered(self, cmd: str) -> str | None:
        """A coordinate statement with its words put in X, Y, I, J order (None: not one)."""
        rest = cmd
        m = _WORDS.match(rest)
        if m is not None and m["words"]:
            words = _WORD.findall(m["words"])
            letters = [w[0] for w in words]
            twice = [ch for ch in "XYIJ" if letters.count(ch) > 1]
            if twice:  # which of the two was meant is not known: refused
                raise self.error(f"coordinate {twice[0]} given twice in {rest[:40]!r}",
                                 "each of X, Y, I, J at most once per statement")
            ordered = sorted(words, key=lambda w: "XYIJ".index(w[0]))
            if ordered != words:
                self.sc_dialect.accept(self.lineno, "coordinate words out of order",
                                       f"{rest[:40]!r} writes {''.join(letters)}",
                                       "each word read by its letter (X, Y, I, J)", "X, Y, I, J in this order")
                return (m["g"] or "") + "".join(ordered) + (m["d"] or "")
        return None

    def _too_many_objects(self) -> LimitError:
        limit = self.sc_limits.max_gerber_objects
        return LimitError(self.sc_name, self.lineno, f"more than {limit} graphical objects",
                          "at most limits.max_gerber_objects objects")

    def _count_expanded(self, made: int, what: str, line: int) -> None:
        """Add ``made`` copies to the file's expansion count, or refuse before they are made.

        Amplification is what makes a bomb: a few bytes of AB/SR placing many objects, whose
        geometry then takes minutes. An honest layer written out object by object is not counted.
        """
        limit = self.sc_limits.max_expanded_objects
        if self.sc_expanded + made > limit:
            raise LimitError(
                self.sc_name, line,
                f"{what} would bring the objects made by copying (AB flashes, SR repeats) to "
                f"{self.sc_expanded + made}, more than limits.max_expanded_objects = {limit}",
                f"at most {limit} objects made by copying; for a genuine file, raise "
                f"max_expanded_objects in the [limits] table of sensorcheck.toml")
        self.sc_expanded += made

    def _tag_new(self, start: int) -> None:
        """Give objects made by the last command their line, transformation and block expansion."""
        objects = self.target.objects
        i = start
        while i < len(objects):
            obj = objects[i]
            d = obj.__dict__
            if "_sc_line" not in d:
                d["_sc_line"] = self.lineno
                if type(obj) is not go.Region:
                    d["_sc_xform"] = self.sc_xform
                    if type(obj) is go.Flash and isinstance(obj.aperture, BlockAperture):
                        if self.sc_xform != IDENTITY_XFORM:
                            raise self.error("LM/LR/LS transformation of a block aperture (AB) flash is not supported",
                                             "LMN, LR0 and LS1 when a block aperture is flashed")
                        # checked before anything is copied: nested blocks multiply their counts, and
                        # copying up to the limit first took tens of seconds for a file of kilobytes
                        count = obj.aperture.expanded_count
                        if len(objects) + self.sc_extra - 1 + count > self.sc_limits.max_gerber_objects:
                            raise self._too_many_objects()
                        if self.sc_blocks:  # inside a block definition: placed with the outer block
                            self.sc_extra += count - 1
                            i += 1
                            continue
                        # the flash statement is one object of the file; the other count - 1 are made
                        self._count_expanded(max(count - 1, 0), f"flash of block aperture "
                                             f"D{obj.aperture.original_number} placing {count} object{'' if count == 1 else 's'}",
                                             self.lineno)
                        copies = self._place_block(obj)
                        objects[i:i + 1] = copies
                        i += len(copies)
                        continue
            i += 1

    @staticmethod
    def _expanded_count(objects: Any) -> int:
        """How many objects ``objects`` stand for once every block flash among them is placed."""
        n = 0
        for obj in objects:
            if type(obj) is go.Flash and isinstance(obj.aperture, BlockAperture):
                n += obj.aperture.expanded_count
            else:
                n += 1
        return n

    def _place_block(self, flash: go.Flash) -> list[Any]:
        # Gerber spec 2023.08 section 4.11 (block aperture): flashing a block places its objects
        # with the block origin at the flash point; a clear flash toggles their polarity. Blocks
        # flashed inside the block are placed the same way, relative to their own flash point.
        # An explicit stack, not recursion: a chain of redefined blocks can nest deeper than
        # Python's recursion limit.
        out: list[Any] = []
        stack = [(iter(flash.aperture.objects), flash.x, flash.y, not flash.polarity_dark)]
        while stack:
            items, dx, dy, invert = stack[-1]
            for obj in items:
                if type(obj) is go.Flash and isinstance(obj.aperture, BlockAperture):
                    stack.append((iter(obj.aperture.objects), dx + obj.x, dy + obj.y,
                                  invert == bool(obj.polarity_dark)))
                    break
                new = _moved_copy(obj, dx, dy)
                if invert:
                    new.polarity_dark = not new.polarity_dark
                out.append(new)
            else:
                stack.pop()
        return out

    # ---- fixes -----------------------------------------------------------------------------

    def _parse_coord(self, match: re.Match[str]) -> None:
        groups = match.groups()
        op = groups[9]
        if (groups[2] or groups[4] or groups[6] or groups[8]):
            if self.file_settings.number_format == (None, None):
                raise self.error("coordinates before the coordinate format", "%FS...*% before any coordinate")
        if op == "3" or op == "1":
            if self.file_settings.unit is None:
                raise self.error("graphical object before the unit", "%MOMM*% or %MOIN*% before any object")
        for axis, raw in zip("XYIJ", (groups[2], groups[4], groups[6], groups[8])):
            # the format allows at most 6 integer and 6 decimal digits (spec 4.2.2): more significant
            # digits than that are a broken file, and would overflow or lose precision later
            if raw and len(raw.lstrip("+-").lstrip("0")) > _MAX_COORD_DIGITS:
                raise self.error(f"{axis} coordinate of {len(raw.lstrip('+-'))} digits",
                                 f"at most {_MAX_COORD_DIGITS} significant digits (format 6.6 at most)")
        if op is None and (groups[2] or groups[4] or groups[6] or groups[8]):
            match = self._modal_operation(match)
            op = match.groups()[9]
        if op is not None:
            self.sc_last_op = op
        region = self.current_region
        super()._parse_coord(match)
        if self.current_region is not region and self.current_region is not None:
            self._tag_region(self.current_region)

    def _modal_operation(self, match: re.Match[str]) -> re.Match[str]:
        """A coordinate statement without D code, given the operation code it repeats.

        Gerber spec 2023.08 section 8.3.2 (deprecated): after a D01 the D01 is modal. RS-274-D,
        which the older files follow, makes every D code modal, and gerbonara 1.6.3 repeats the
        last one for the files it knows (an implied double D02 in a Mentor export): so the last
        D01/D02/D03 repeats. With no D code before it, a move (D02): nothing is drawn that the
        file does not say (a reading of our own; the spec leaves it undefined).
        """
        op = self.sc_last_op or "2"
        self.sc_dialect.accept(self.lineno, "coordinates without a D code",
                               f"{match.string[:40]!r} has no operation code",
                               f"read as D0{op} ({'the last operation code repeats' if self.sc_last_op else 'a move: no D code before it'})",
                               "an explicit D01, D02 or D03 on every coordinate statement")
        fixed = self._coord_rx.match(match.string + "D0" + op)
        assert fixed is not None
        return fixed

    def _parse_region_start(self, match: re.Match[str]) -> None:
        super()._parse_region_start(match)
        self._tag_region(self.current_region)

    def _tag_region(self, region: go.Region) -> None:
        # Gerber spec 2023.08 section 5.2: a region gets the object attributes of the current
        # attribute dictionary, and .AperFunction from the aperture attributes in effect.
        region.attrs = dict(self.graphics_state.object_attrs)
        region.__dict__["_sc_aperture_attrs"] = dict(self.aperture_attrs)
        region.__dict__["_sc_line"] = self.lineno

    def _parse_step_repeat(self, match: re.Match[str]) -> None:
        # Gerber spec 2023.08 section 4.11.1: SR with parameters opens a block (closing an open one),
        # SR without parameters closes it.
        if self.sc_sr is not None:
            self._close_step_repeat()
        if match["coords"]:
            x, y = int(match["X"]), int(match["Y"])
            i, j = float(match["I"]), float(match["J"])
            if x < 1 or y < 1:
                raise self.error(f"step-and-repeat count X{x}Y{y}", "X and Y of at least 1")
            if x * y > self.sc_limits.max_step_repeat_copies:
                raise LimitError(self.sc_name, self.lineno, f"step-and-repeat of {x * y} copies",
                                 f"at most limits.max_step_repeat_copies = {self.sc_limits.max_step_repeat_copies}")
            self.sc_sr = (x, y, i, j, len(self.target.objects), self.lineno)

    def _close_step_repeat(self) -> None:
        assert self.sc_sr is not None
        x, y, i, j, start, line = self.sc_sr
        self.sc_sr = None
        objects = self.target.objects
        block = objects[start:]
        # block flashes kept unexpanded inside an open block count for what they will place
        weight = self._expanded_count(block)
        total = weight * x * y
        if len(objects) + self.sc_extra - weight + total > self.sc_limits.max_gerber_objects:
            raise LimitError(self.sc_name, line, f"step-and-repeat expands to {total} objects",
                             "at most limits.max_gerber_objects objects in the file")
        # the copies made here, also inside a block definition (they are made now, and a block
        # flashed inside it stays one object until the block is placed, counted then)
        self._count_expanded((x * y - 1) * len(block), f"step-and-repeat of {x * y} copies of "
                             f"{len(block)} object{'' if len(block) == 1 else 's'}", line)
        self.sc_extra += (x * y - 1) * (weight - len(block))
        del objects[start:]
        for nx in range(x):
            for ny in range(y):
                for obj in block:
                    if nx == 0 and ny == 0:
                        objects.append(obj)
                        continue
                    objects.append(_moved_copy(obj, i * nx, j * ny))

    def _parse_aperture_block(self, match: re.Match[str]) -> None:
        if match["number"] is not None:
            number = int(match["number"])
            if number < 10:
                raise self.error(f"block aperture number D{number}", "D10 or higher")
            self.sc_blocks.append((number, len(self.target.objects), self.lineno))
        else:
            if not self.sc_blocks:
                raise self.error("%AB*% without an open block", "%ABD<n>*% before %AB*%")
            number, start, _line = self.sc_blocks.pop()
            objects = self.target.objects
            block = tuple(objects[start:])
            count = self._expanded_count(block)
            self.sc_extra -= count - len(block)
            del objects[start:]
            self.aperture_map[number] = BlockAperture(block, unit=self.file_settings.unit,
                                                      original_number=number, expanded_count=count)

    def _parse_aperture_mirroring(self, match: re.Match[str]) -> None:
        m = match["mirror"]
        _, _, rot, scale = self.sc_xform
        self.sc_xform = ("X" in m, "Y" in m, rot, scale)

    def _parse_aperture_rotation(self, match: re.Match[str]) -> None:
        mx, my, _, scale = self.sc_xform
        self.sc_xform = (mx, my, float(match["angle"]), scale)

    def _parse_aperture_scaling(self, match: re.Match[str]) -> None:
        mx, my, rot, _ = self.sc_xform
        scale = float(match["scale"])
        if not 0 < scale <= _MAX_APERTURE_SCALE:
            raise self.error(f"aperture scale LS{match['scale']}",
                             f"a scale factor > 0 and at most {_MAX_APERTURE_SCALE:g} (larger ones make apertures "
                             "bigger than any board)")
        self.sc_xform = (mx, my, rot, scale)

    def _parse_aperture_macro(self, match: re.Match[str]) -> None:
        self.aperture_macros[match["name"]] = MacroDefinition.parse(match["name"], match["macro"])

    def _parse_aperture_definition(self, match: re.Match[str]) -> None:
        shape = match["shape"]
        if self.file_settings.unit is None:
            # Gerber spec 2023.08 section 4.2.1: MO is a file-wide setting, written once in the header;
            # an aperture defined before it takes the unit the file then sets (objects before the unit
            # stay refused: their coordinates have no unit yet)
            self.sc_dialect.accept(self.lineno, "%AD before %MO", f"aperture D{match['number']} is defined before the unit",
                                   "its sizes are read in the unit the file sets next", "%MO before the first %AD")
            self.sc_unitless.append((int(match["number"]), self.lineno))
        params = tuple(float(v) for v in match["modifiers"].strip(" ,").split("X")) if match["modifiers"] else ()
        number = int(match["number"])
        for p in params:
            if not math.isfinite(p) or abs(p) > _MAX_APERTURE_PARAM:
                raise self.error(f"aperture D{number} has the parameter {p:g}",
                                 f"finite parameters of at most {_MAX_APERTURE_PARAM:g} (no aperture is larger than a board)")
        if shape in ("C", "R", "O", "P"):
            counts = {"C": (1, 3), "R": (2, 4), "O": (2, 4), "P": (2, 5)}[shape]
            if not counts[0] <= len(params) <= counts[1]:
                raise self.error(f"aperture D{number} ({shape}) has {len(params)} parameters",
                                 f"{counts[0]} to {counts[1]} parameters for a {shape} aperture")
            if any(p < 0 for p in params[:1]) or (shape in "RO" and params[1] < 0):
                raise self.error(f"aperture D{number} has a negative size", "sizes >= 0")
            if shape == "P" and not 3 <= int(params[1]) <= 12:
                raise self.error(f"polygon aperture D{number} with {params[1]:g} vertices", "3 to 12 vertices")
            self.aperture_map[number] = StandardAperture(
                shape, params, unit=self.file_settings.unit,
                attrs=tuple(self.aperture_attrs.items()), original_number=number,
            )
            return
        macro = self.aperture_macros.get(shape)
        if macro is None:
            raise self.error(f"aperture D{match['number']} uses the undefined macro {shape!r}",
                             f"%AM{shape}*...% before this aperture definition")
        self.aperture_map[number] = MacroAperture(
            shape, params, macro.evaluate(params), unit=self.file_settings.unit,
            attrs=tuple(self.aperture_attrs.items()), original_number=number,
        )

    def _parse_aperture(self, match: re.Match[str]) -> None:
        number = int(match["number"])
        if number >= 10 and number not in self.aperture_map:
            raise self.error(f"aperture D{number} is used but not defined", f"%ADD{number}...*% before its use")
        super()._parse_aperture(match)

    def _parse_format_spec(self, match: re.Match[str]) -> None:
        if match["notation"] == "I":
            raise self.error("incremental coordinate notation is not supported", "absolute notation (%FSLA...*%)")
        super()._parse_format_spec(match)

    def _parse_old_notation(self, match: re.Match[str]) -> None:
        if match["mode"] == "G91":
            raise self.error("incremental coordinate notation (G91) is not supported", "absolute notation (G90)")
        super()._parse_old_notation(match)

    def _set_unit(self, unit: Any, written: str) -> None:
        current = self.file_settings.unit
        if current is not None and current != unit:
            # Gerber spec 2023.08 section 4.2.1 allows MO once per file; older files switch mid-file.
            # Read as gerbv and gerbonara do: what comes after is in the new unit, what came before
            # keeps its own (every object and aperture carries the unit it was made in).
            self.sc_dialect.accept(self.lineno, "mid-file %MO change",
                                   f"{written} changes the unit from {current.shorthand} to {unit.shorthand}",
                                   "what follows is read in the new unit, what came before keeps its own",
                                   "one unit for the whole file")
            point = self.graphics_state.point
            if point is not None:  # the current point, kept in file units, is the same place in the new unit
                k = current.convert_to(unit, 1.0)
                self.graphics_state.point = (point[0] * k, point[1] * k)
        self.graphics_state.unit = self.file_settings.unit = unit
        if self.sc_unitless:
            for number, _line in self.sc_unitless:
                ap = self.aperture_map[number]
                self.aperture_map[number] = new = dataclasses.replace(ap, unit=unit)
                if self.graphics_state.aperture is ap:
                    self.graphics_state.aperture = new
            self.sc_unitless = []
        if self.sc_image.offset_unit is None:
            self.sc_image.offset_unit = unit

    def _parse_unit_mode(self, match: re.Match[str]) -> None:
        self._set_unit(MM if match["unit"] == "MM" else Inch, f"%MO{match['unit']}*%")

    def _parse_allegro_format_spec(self, match: re.Match[str]) -> None:
        self._parse_format_spec(match)
        self._parse_unit_mode(match)

    def _parse_old_unit(self, match: re.Match[str]) -> None:
        self._set_unit(Inch if match["mode"] == "G70" else MM, match["mode"])

    # Deprecated image-wide commands (spec 2023.08 section 8.1). gerbonara maps coordinates through
    # IR/MI/SF/OF but not the aperture shapes: its graphics state is kept neutral here, and the
    # whole image (shapes included) is transformed after the geometry is built (ImageTransform).
    def _image_command(self, construct: str, written: str, neutral: bool, reading: str, expected: str) -> None:
        if neutral:
            return
        if self.target.objects or self.current_region is not None:
            # the spec makes these image-wide; a change after objects has no agreed reading
            raise self.error(f"{written} after graphical objects: the image transformation changes mid-file",
                             f"{construct} in the header, before any object")
        self.sc_dialect.accept(self.lineno, construct, f"{written} (deprecated image command)", reading, expected)

    def _parse_image_polarity(self, match: re.Match[str]) -> None:
        negative = match["polarity"] == "NEG"
        self._image_command("%IPNEG (negative image)", f"%IP{match['polarity']}*%", negative == self.sc_image.negative,
                            "drawn as the box around the objects with the objects cut out of it",
                            "%IPPOS*% or no IP command")
        self.sc_image.negative = negative

    def _rotation(self, construct: str, written: str, angle: float, expected: str) -> None:
        if angle % 90 != 0:
            raise self.error(f"{written}: rotation by {angle:g} degrees", "0, 90, 180 or 270 degrees")
        self._image_command(construct, written, angle % 360 == self.sc_image.rotation_deg % 360,
                            f"the image is rotated by {angle % 360:g} degrees counter-clockwise about the origin",
                            expected)
        self.sc_image.rotation_deg = angle % 360

    def _parse_image_rotation(self, match: re.Match[str]) -> None:
        self._rotation("%IR (image rotation)", f"%IR{match['rotation']}*%", float(match["rotation"]),
                       "%IR0*% or no IR command")

    def _parse_layer_rotation(self, match: re.Match[str]) -> None:
        # RO (rotate), an RS-274X parameter of the 1990s that gerbv reads as a rotation of the layer
        # about the origin, counter-clockwise in degrees (from memory of gerbv's reader); read like IR
        self._rotation("%RO (rotation)", f"%RO{match['angle']}*%", float(match["angle"]), "no RO command")

    def _parse_mirror_image(self, match: re.Match[str]) -> None:
        # a missing A or B is 0 (no mirroring) in the specification (gerbonara 1.6.3 takes B as 1)
        ma, mb = (match["ma"] or "0") == "1", (match["mb"] or "0") == "1"
        self._image_command("%MI (image mirror)", f"%MIA{int(ma)}B{int(mb)}*%",
                            (ma, mb) == (self.sc_image.mirror_a, self.sc_image.mirror_b),
                            f"the image is mirrored{' in x' if ma else ''}{' and' if ma and mb else ''}"
                            f"{' in y' if mb else ''} about the origin", "%MIA0B0*% or no MI command")
        self.sc_image.mirror_a, self.sc_image.mirror_b = ma, mb

    def _parse_scale_factor(self, match: re.Match[str]) -> None:
        a = float(match["sa"]) if match["sa"] else 1.0
        b = float(match["sb"]) if match["sb"] else 1.0
        if not (0 < a <= _MAX_APERTURE_SCALE and 0 < b <= _MAX_APERTURE_SCALE):
            raise self.error(f"image scale %SFA{a:g}B{b:g}*%", f"scale factors > 0 and at most {_MAX_APERTURE_SCALE:g}")
        self._image_command("%SF (image scale)", f"%SFA{a:g}B{b:g}*%", (a, b) == (self.sc_image.scale_a, self.sc_image.scale_b),
                            f"the whole image (apertures too) is scaled by {a:g} in x and {b:g} in y about the origin",
                            "%SFA1B1*% or no SF command")
        self.sc_image.scale_a, self.sc_image.scale_b = a, b

    def _parse_offset(self, match: re.Match[str]) -> None:
        a = float(match["a"]) if match["a"] else 0.0
        b = float(match["b"]) if match["b"] else 0.0
        if not (abs(a) <= _MAX_APERTURE_PARAM and abs(b) <= _MAX_APERTURE_PARAM):
            raise self.error(f"image offset %OFA{a:g}B{b:g}*%", f"an offset of at most {_MAX_APERTURE_PARAM:g}")
        self._image_command("%OF (image offset)", f"%OFA{a:g}B{b:g}*%", (a, b) == self.sc_image.offset,
                            f"the image is moved by ({a:g}, {b:g}) in the file's unit", "%OFA0B0*% or no OF command")
        self.sc_image.offset = (a, b)
        self.sc_image.offset_unit = self.file_settings.unit

    def _parse_axis_selection(self, match: re.Match[str]) -> None:
        swap = match["axes"] == "AYBX"
        self._image_command("%AS (axis select)", f"%AS{match['axes']}*%", swap == self.sc_image.swap_axes,
                            "x and y are swapped (A data on the y axis)", "%ASAXBY*% or no AS command")
        self.sc_image.swap_axes = swap

    def _parse_allegro_legacy_params(self, match: re.Match[str]) -> None:
        self._parse_image_rotation(match)
        self._parse_offset(match)
        self._parse_image_polarity(match)
        self._parse_mirror_image(match)
        self._parse_scale_factor(match)

    def _parse_image_name(self, match: re.Match[str]) -> None:
        # spec 2023.08 section 8.1 (IN): a name for the image, no effect on it
        self.sc_dialect.accept(self.lineno, "%IN (image name)", f"%IN{match['name'][:30]}*%", "ignored: a name does not change the image",
                               "a G04 comment or the .FileFunction attribute")

    def _parse_load_name(self, match: re.Match[str]) -> None:
        # spec 2023.08 section 8.1 (LN): names the objects that follow, no effect on the image
        self.sc_dialect.accept(self.lineno, "%LN (load name)", f"%LN{match['name'][:30]}*%", "ignored: a name does not change the image",
                               "a G04 comment")

    def _parse_include_file(self, match: re.Match[str]) -> None:
        raise self.error("include files (IF) are not read", "a self-contained Gerber file")

    def _parse_comment(self, match: re.Match[str]) -> None:
        cmt = match["comment"].strip()
        if cmt.startswith("#@!"):
            # X2 attributes in the comment form (Gerber spec 2023.08 section 5.1.1: "G04 #@! " + attribute)
            m = _ATTRIBUTE_RX.match(cmt[3:].strip().strip("%").rstrip("*"))
            if m is not None:
                self._parse_attribute(m)
                return
        super()._parse_comment(match)

    def _parse_attribute(self, match: re.Match[str]) -> None:
        if match["type"] == "TD" and match["name"]:
            name = match["name"]
            self.graphics_state.object_attrs.pop(name, None)
            self.aperture_attrs.pop(name, None)
            return
        super()._parse_attribute(match)


def decode_gerber(data: bytes, name: str, log: DialectLog | None = None) -> str:
    """Bytes -> text, refusing binary data with the line of the first bad byte.

    NUL (and CP/M end-of-file 0x1a) bytes after the last command are padding some exporters and
    file transfers add: dropped with a warning (``log``; refused when strict). Binary bytes inside
    the command stream stay refused. Line ends may be LF, CR LF or a bare CR (old Mac style).
    """
    data = strip_padding(data, log)
    bad = re.search(rb"[\x00-\x08\x0b\x0e-\x1f\x7f]", data)
    if bad is not None:
        line = line_of(data[:bad.start()])
        raise InputError(name, line, f"binary data (byte 0x{data[bad.start()]:02x}) in a Gerber file",
                         "text (Gerber RS-274X is ASCII)")
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        text = data.decode("latin-1")  # every byte decodes: a comment in a legacy code page
    if "\r" in text:  # CR LF and bare CR (old Mac) line ends: lines counted right in every message
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    return text


def parse_gerber_text(text: str, name: str, limits: Limits = DEFAULT_LIMITS, *,
                      log: DialectLog | None = None) -> ParseResult:
    """Parse Gerber text with our parser subclass; InputError for anything it cannot read.

    ``log`` carries the warnings (and strictness) of the file's reading so far (see decode_gerber);
    by default a new, lenient one.
    """
    target = GerberFile()
    parser = SensorcheckGerberParser(target, name, limits, strict=log.strict if log is not None else False)
    if log is not None:
        parser.sc_dialect = log
        parser.sc_warnings = log.warnings
    try:
        parser.parse(text, filename=name)
    except InputError:
        raise
    except RecursionError as exc:  # pathological nesting of macro expressions
        raise InputError(name, parser.lineno or None, "expression nested too deeply", "a simpler expression") from exc
    unit = target.unit
    if unit is None:
        if target.objects:  # pragma: no cover - refused at the first object
            raise InputError(name, None, "no unit", "%MOMM*% or %MOIN*%")
        units = "mm"
    else:
        units = "inch" if unit == Inch else "mm"
    attrs = {k: list(v) for k, v in parser.file_attrs.items()}
    decimals = parser.file_settings.number_format[1] or 6
    resolution_mm = 10.0**-decimals * (25.4 if units == "inch" else 1.0)
    if parser.sc_image.offset_unit is None:
        parser.sc_image.offset_unit = unit
    return ParseResult(target, units, resolution_mm, attrs, parser.sc_warnings, list(target.comments),
                       expanded_objects=parser.sc_expanded, image=parser.sc_image, dialect=parser.sc_dialect)

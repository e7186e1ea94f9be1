"""Strict unit table and parser for the dimensional values of a spec.

Every dimensional field of a spec is written as a string ``"<number> <unit>"``
("120 uH", "48 V", "4200 rpm", "40 degC") and converted to SI exactly once, here.

Why our own table instead of a general unit library: a general parser accepts far
too much for a design-rule linter (it may read "25 Nm" as a number times a metre,
"1,5 kHz" as 15 kHz, and evaluate "1/2 V"). Here each dimension has a short,
case-sensitive allowlist, and anything else is rejected with a message that names
the accepted units. The factors are verified against an independent reference in
``tests/test_units.py``; this module imports nothing outside the standard library.

Grammar (see ``docs/units.md``)::

    quantity := number [" "] unit        (at most one plain space in between;
                                          leading/trailing whitespace is ignored)
    number   := [+-] (digits ["." [digits]] | "." digits) [("e"|"E") [+-] digits]
    digits   := ASCII 0-9, at most 30 characters for the whole number

The micro signs U+00B5 and U+03BC are read as "u"; the ohm sign U+2126 is read as
the Greek capital omega U+03A9.

Numerical choice: for a unit that is a power of ten times a scale (uH = 1e-6 H,
krpm = 1e3 * 2*pi/60 rad/s), the power of ten is applied to the decimal text
itself ("100 uH" is read as the decimal "100e-6"), so the result is the float
nearest to the written value in SI. Multiplying by the float 1e-6 would round twice
and leaves noise such as 1.0000000000000002e-04.
"""

from __future__ import annotations

import math
import numbers
import re
import unicodedata
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

__all__ = [
    "DIMENSIONS",
    "ERROR_CODES",
    "Dimension",
    "UnitError",
    "accepted_units",
    "format_si",
    "parse_quantity",
    "underflow_message",
    "foreign_letters",
]

ERROR_CODES = frozenset(
    {
        "missing_unit",
        "unknown_unit",
        "wrong_dimension",
        "case",
        "comma_decimal",
        "non_finite",
        "syntax",
    }
)

# Longest number text accepted, in characters ("-2.2250738585072014e-308" is 24).
MAX_NUMBER_LENGTH = 30


class UnitError(ValueError):
    """A dimensional value that cannot be read.

    ``code`` is one of ``ERROR_CODES``; ``message`` is one line of plain words that
    names the accepted units (the caller adds the location); ``accepted`` lists the
    accepted unit spellings of the dimension; ``dimension`` is its name.
    """

    def __init__(self, code: str, message: str, accepted: tuple[str, ...] = (), dimension: str = "") -> None:
        if code not in ERROR_CODES:
            raise ValueError(f"unknown unit error code {code!r}")
        super().__init__(message)
        self.code = code
        self.message = message
        self.accepted = tuple(accepted)
        self.dimension = dimension

    def __str__(self) -> str:
        return self.message

    def __reduce__(self):  # keeps the error picklable (e.g. across processes)
        return (type(self), (self.code, self.message, self.accepted, self.dimension))


@dataclass(frozen=True)
class Dimension:
    """One physical dimension: its SI unit and the unit spellings accepted for it.

    ``units`` maps a unit text to ``(factor, offset)`` with ``si = value * factor +
    offset``; its order is the order of ``accepted_units``.
    """

    name: str
    si_unit: str
    units: Mapping[str, tuple[float, float]] = field(hash=False)
    example: str


@dataclass(frozen=True)
class _Conversion:
    exp10: int  # power of ten applied to the decimal text
    scale: float = 1.0  # then multiplied by this
    offset: float = 0.0  # then this is added

    @property
    def factor(self) -> float:
        return float(f"1e{self.exp10}") * self.scale


_RPM = math.pi / 30.0  # 1 rpm = 2*pi rad / 60 s
_PER_RPM = 30.0 / math.pi  # 1 V/rpm = 60/(2*pi) V*s/rad


def _c(exp10: int = 0, scale: float = 1.0, offset: float = 0.0) -> _Conversion:
    return _Conversion(exp10, scale, offset)


# The tables below are laid out by hand, one dimension per block.
# fmt: off
# name: (SI unit, example, article + noun for messages, {unit: conversion}, display units)
# Display units are the ones format_si may choose, smallest first.
_TABLE: dict[str, tuple[str, str, str, dict[str, _Conversion], tuple[str, ...]]] = {
    "voltage": (
        "V", "48 V", "a voltage",
        {"V": _c(), "mV": _c(-3), "kV": _c(3)},
        ("mV", "V", "kV"),
    ),
    "current": (
        "A", "2.5 A", "a current",
        {"A": _c(), "mA": _c(-3), "uA": _c(-6)},
        ("uA", "mA", "A"),
    ),
    "resistance": (
        "ohm", "2.3 ohm", "a resistance",
        {
            "ohm": _c(), "mohm": _c(-3), "kohm": _c(3), "Mohm": _c(6),
            "\u03a9": _c(), "m\u03a9": _c(-3), "k\u03a9": _c(3), "M\u03a9": _c(6),
        },
        ("mohm", "ohm", "kohm", "Mohm"),
    ),
    "inductance": (
        "H", "120 uH", "an inductance",
        {"H": _c(), "mH": _c(-3), "uH": _c(-6), "nH": _c(-9)},
        ("nH", "uH", "mH", "H"),
    ),
    "capacitance": (
        "F", "470 uF", "a capacitance",
        {"F": _c(), "mF": _c(-3), "uF": _c(-6), "nF": _c(-9), "pF": _c(-12)},
        ("pF", "nF", "uF", "mF", "F"),
    ),
    "frequency": (
        "Hz", "25 kHz", "a frequency",
        {"Hz": _c(), "kHz": _c(3), "MHz": _c(6)},
        ("Hz", "kHz", "MHz"),
    ),
    "time": (
        "s", "300 ns", "a time",
        {
            "s": _c(), "ms": _c(-3), "us": _c(-6), "ns": _c(-9),
            "min": _c(0, 60.0), "h": _c(0, 3600.0),
        },
        ("ns", "us", "ms", "s"),
    ),
    "temperature": (
        "K", "40 degC", "an absolute temperature",
        {"degC": _c(0, 1.0, 273.15), "K": _c()},
        ("degC",),
    ),
    "temperature_difference": (
        "K", "15 K", "a temperature difference",
        {"K": _c()},
        ("K",),
    ),
    "speed": (
        "rad/s", "4200 rpm", "a speed",
        {"rad/s": _c(), "rpm": _c(0, _RPM), "krpm": _c(3, _RPM)},
        ("rpm",),
    ),
    "back_emf_constant": (
        "V*s/rad", "1.42 mV/rpm", "a back-EMF constant",
        {
            "V/(rad/s)": _c(), "V*s/rad": _c(), "V/krpm": _c(-3, _PER_RPM),
            "mV/rpm": _c(-3, _PER_RPM), "V/rpm": _c(0, _PER_RPM),
        },
        ("V*s/rad",),
    ),
    "torque_constant": (
        "N*m/A", "23.5 mN*m/A", "a torque constant",
        {"N*m/A": _c(), "mN*m/A": _c(-3)},
        ("mN*m/A", "N*m/A"),
    ),
    "torque": (
        "N*m", "22 mN*m", "a torque",
        {"N*m": _c(), "mN*m": _c(-3), "uN*m": _c(-6)},
        ("uN*m", "mN*m", "N*m"),
    ),
    "inertia": (
        "kg*m^2", "18 g*cm^2", "an inertia",
        {"kg*m^2": _c(), "g*cm^2": _c(-7), "kg*cm^2": _c(-4), "g*m^2": _c(-3)},
        ("g*cm^2", "kg*cm^2", "kg*m^2"),
    ),
    "thermal_resistance": (
        "K/W", "3.5 K/W", "a thermal resistance",
        {"K/W": _c()},
        ("K/W",),
    ),
    "power": (
        "W", "60 W", "a power",
        {"W": _c(), "mW": _c(-3), "kW": _c(3)},
        ("mW", "W", "kW"),
    ),
    "energy": (
        "J", "2.5 J", "an energy",
        {"J": _c(), "mJ": _c(-3), "kJ": _c(3)},
        ("mJ", "J", "kJ"),
    ),
    "length": (
        "m", "22 mm", "a length",
        {"m": _c(), "mm": _c(-3), "cm": _c(-2), "km": _c(3)},
        ("mm", "m", "km"),
    ),
    "resistivity": (
        "ohm*m", "0.48 uohm*m", "a resistivity",
        {"ohm*m": _c(), "mohm*m": _c(-3), "uohm*m": _c(-6), "nohm*m": _c(-9), "uohm*cm": _c(-8)},
        ("nohm*m", "uohm*m", "mohm*m", "ohm*m"),
    ),
    "flux_linkage": (
        "Wb", "8.5 mWb", "a flux linkage",
        {"Wb": _c(), "mWb": _c(-3)},
        ("mWb", "Wb"),
    ),
    "angle": (
        "rad", "45 deg", "an angle",
        {"rad": _c(), "deg": _c(0, math.pi / 180.0)},
        ("deg",),
    ),
}

# Spellings that are not accepted but whose intent is clear enough to name the fix.
# Keyed by dimension; values are the hint text that follows "write ...".
_DIFFERENCE_NOTE = "a difference of 1 degC is 1 K"
_HINTS: dict[str, dict[str, str]] = {
    "voltage": {u: "V (say DC, RMS or peak in the field, not in the unit)"
                for u in ("Vdc", "VDC", "Vac", "VAC", "Vrms", "Vpk", "Vpp")},
    "current": {u: "A (say RMS or peak in the field, not in the unit)"
                for u in ("Arms", "ARMS", "Apk", "Apeak", "Ap", "App", "Adc")},
    "resistance": {"ohms": "ohm", "Ohms": "ohm", "mohms": "mohm", "kohms": "kohm",
                   "R": "ohm", "mR": "mohm"},
    "time": {"sec": "s", "secs": "s", "msec": "ms", "usec": "us", "nsec": "ns",
             "mins": "min", "hr": "h", "hrs": "h", "hour": "h", "hours": "h"},
    "temperature": {"\u00b0C": "degC", "\u2103": "degC", "C": "degC", "oC": "degC",
                    "celsius": "degC", "Celsius": "degC", "deg": "degC",
                    "\u00b0K": "K", "degK": "K",
                    "\u00b0F": "degC or K (Fahrenheit is not accepted)",
                    "degF": "degC or K (Fahrenheit is not accepted)"},
    "temperature_difference": {u: f"K ({_DIFFERENCE_NOTE})"
                               for u in ("\u00b0C", "\u2103", "C", "oC", "delta_degC",
                                         "deltaK", "\u0394K", "\u00b0K", "degK")},
    "thermal_resistance": {u: f"K/W ({_DIFFERENCE_NOTE})"
                           for u in ("degC/W", "\u00b0C/W", "\u2103/W", "C/W")},
    "speed": {"r/min": "rpm", "rev/min": "rpm", "1/min": "rpm", "U/min": "rpm",
              "min^-1": "rpm", "min-1": "rpm", "rad/sec": "rad/s", "rps": "rpm or rad/s",
              "Hz": "rpm or rad/s (a speed is not a frequency here)"},
    "back_emf_constant": {"Vs": "V*s/rad", "V*s": "V*s/rad", "V/(1000rpm)": "V/krpm",
                          "V/1000rpm": "V/krpm", "Vs/rad": "V*s/rad"},
}
# fmt: on

_BY_NAME: dict[str, Dimension] = {}
_CONV: dict[str, dict[str, _Conversion]] = {}
_ACCEPTED: dict[str, tuple[str, ...]] = {}
_PHRASE: dict[str, str] = {}
_DISPLAY: dict[str, tuple[tuple[str, _Conversion], ...]] = {}
_EXAMPLE: dict[str, str] = {}

for _name, (_si, _example, _phrase, _units, _display) in _TABLE.items():
    _CONV[_name] = dict(_units)
    _ACCEPTED[_name] = tuple(_units)
    _PHRASE[_name] = _phrase
    _EXAMPLE[_name] = _example
    _DISPLAY[_name] = tuple((u, _units[u]) for u in _display)
    _BY_NAME[_name] = Dimension(
        name=_name,
        si_unit=_si,
        units=MappingProxyType({u: (c.factor, c.offset) for u, c in _units.items()}),
        example=_example,
    )

DIMENSIONS: Mapping[str, Dimension] = MappingProxyType(_BY_NAME)

# unit text -> dimensions that accept it exactly; lower-cased text -> (dimension, unit)
_DIMS_OF_UNIT: dict[str, list[str]] = {}
_LOWER_INDEX: dict[str, list[tuple[str, str]]] = {}
for _name, _units in _CONV.items():
    for _u in _units:
        _DIMS_OF_UNIT.setdefault(_u, []).append(_name)
        _LOWER_INDEX.setdefault(_u.lower(), []).append((_name, _u))

# unit text -> (exp10, scale, offset) as plain tuples for the fast path
_FAST: dict[str, dict[str, tuple[int, float, float]]] = {
    name: {u: (c.exp10, c.scale, c.offset) for u, c in units.items()} for name, units in _CONV.items()
}

del _name, _si, _example, _phrase, _units, _display, _u

# --- the fast path: one regex and one dict lookup --------------------------------------
# groups: mantissa, exponent digits, unit
_QUANTITY = re.compile(r"([+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+))(?:[eE]([+-]?[0-9]+))? ?([^\s0-9.,_/+\-].*)")
# --- diagnosis only --------------------------------------------------------------------
_NUMBER_PREFIX = re.compile(r"[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
_NON_FINITE = re.compile(r"[+-]?(?:nan|inf(?:inity)?)(?![a-z])", re.IGNORECASE)
_COMMA = re.compile(r"[+-]?[0-9.]*[0-9],[0-9]")
_RADIX = re.compile(r"[+-]?0[xXbBoO][0-9A-Fa-f]")
_MICRO = str.maketrans({"\u00b5": "u", "\u03bc": "u", "\u2126": "\u03a9"})
_SQUASH = str.maketrans(
    {
        " ": None,
        "*": None,
        "\u00b7": None,
        "\u22c5": None,
        ".": None,
        "\u00d7": None,
        "^": None,
        "\u00b2": "2",
        "\u00b3": "3",
    }
)


def _table(dimension: str) -> dict[str, _Conversion]:
    try:
        return _CONV[dimension]
    except (KeyError, TypeError):
        raise KeyError(f"unknown dimension {dimension!r}; known: {', '.join(_CONV)}") from None


def accepted_units(dimension: str) -> tuple[str, ...]:
    """The accepted unit spellings of ``dimension``, canonical first."""
    _table(dimension)
    return _ACCEPTED[dimension]


def _convert(mant: str, exp: str | None, conv: tuple[int, float, float]) -> float:
    exp10, scale, offset = conv
    if exp10:
        x = float(f"{mant}e{int(exp) + exp10 if exp else exp10}")
    else:
        x = float(f"{mant}e{exp}" if exp else mant)
    return x * scale + offset if scale != 1.0 or offset else x


def parse_quantity(value: object, dimension: str) -> float:
    """Read ``value`` ("<number> <unit>") as a quantity of ``dimension``, in SI.

    Raises ``UnitError`` for anything that is not a finite number followed by one of
    ``accepted_units(dimension)``; raises ``KeyError`` for an unknown dimension.
    """
    try:
        table = _FAST[dimension]
    except (KeyError, TypeError):
        _table(dimension)  # raises KeyError naming the known dimensions
        raise
    if isinstance(value, str):  # the same steps as _convert, inlined for speed
        m = _QUANTITY.fullmatch(value)
        if m is not None:
            mant, exp, unit = m.groups()
            conv = table.get(unit)
            if conv is not None and m.end(2 if exp else 1) <= MAX_NUMBER_LENGTH:
                exp10, scale, offset = conv
                if exp10:
                    x = float(f"{mant}e{int(exp) + exp10 if exp else exp10}")
                else:
                    x = float(f"{mant}e{exp}" if exp else mant)
                if scale != 1.0 or offset:
                    x = x * scale + offset
                if math.isfinite(x):
                    return x
    return _diagnose(value, dimension, table)


def underflow_message(value: object, dimension: str) -> str | None:
    """The message for a quantity whose written number is not zero but reads as zero
    ("1e-400 A", "1e-318 uA": below the smallest float, in the written unit or in SI),
    else None. ``parse_quantity`` returns 0.0 (or the unit's offset) for such text,
    so callers that must not compute with a silent zero ask this as well."""
    if not isinstance(value, str) or ("e" not in value and "E" not in value):
        return None  # without an exponent, 30 digits cannot reach the float's floor
    text = value.strip().translate(_MICRO)
    m = _QUANTITY.fullmatch(text)
    if m is None:
        return None
    mant, exp, unit = m.groups()
    conv = _FAST[dimension].get(unit)
    if conv is None or exp is None or not any(c in "123456789" for c in mant):
        return None
    exp10, scale, _offset = conv
    try:
        written = float(f"{mant}e{exp}")
        si = float(f"{mant}e{int(exp) + exp10}") * scale
    except (ValueError, OverflowError):
        return None
    if written != 0.0 and si != 0.0:
        return None
    si_unit = DIMENSIONS[dimension].si_unit
    return (
        f"{_show(value.strip())} underflows to zero: the number is too small to represent "
        f"as a 64-bit float in {si_unit if written != 0.0 else unit}; write the value you mean "
        f"(0 if it is zero), e.g. '{_EXAMPLE[dimension]}'"
    )


_KIND_NAMES: dict[type, str] = {
    type(None): "an empty value (null)",
    list: "a list",
    tuple: "a list",
    dict: "a mapping",
    bytes: "bytes",
}


def _noun(phrase: str) -> str:
    return phrase.split(" ", 1)[1]  # "an inductance" -> "inductance"


def _show(text: str) -> str:
    if len(text) > 40:
        text = text[:37] + "..."
    return f"'{text}'" if text.isprintable() else repr(text)


def _diagnose(value: object, dimension: str, table: dict[str, tuple[int, float, float]]) -> float:
    """The slow path: normalise, retry, or raise the most specific UnitError."""
    accepted = _ACCEPTED[dimension]
    phrase = _PHRASE[dimension]
    example = _EXAMPLE[dimension]
    listing = ", ".join(accepted)

    def fail(code: str, message: str) -> UnitError:
        return UnitError(code, message, accepted, dimension)

    if isinstance(value, bool):
        raise fail(
            "missing_unit",
            f"{str(value).lower()} is not a value for {phrase}; write a number with a unit, "
            f"e.g. '{example}' (accepted: {listing})",
        )
    if isinstance(value, numbers.Number):
        raise fail(
            "missing_unit",
            f"a bare number ({value!r}) is not allowed for {phrase}; write it with a unit, "
            f"e.g. '{example}' (accepted: {listing})",
        )
    if not isinstance(value, str):
        kind = next(
            (name for base, name in _KIND_NAMES.items() if isinstance(value, base)),
            f"a {type(value).__name__}",
        )
        raise fail(
            "syntax",
            f"{phrase} must be written as text such as '{example}', not as {kind} (accepted: {listing})",
        )

    text = value.strip().translate(_MICRO)
    shown = _show(value.strip())
    if not text:
        raise fail(
            "syntax",
            f"an empty value is not allowed for {phrase}; write e.g. '{example}' (accepted: {listing})",
        )
    if _NON_FINITE.match(text):
        raise fail(
            "non_finite",
            f"{shown} is not a finite number; write a finite {_noun(phrase)}, e.g. '{example}' (accepted: {listing})",
        )
    if text[0] == "\u2212":
        raise fail(
            "syntax",
            f"{shown} starts with a typographic minus sign; write it as '-' (accepted: {listing})",
        )
    if _RADIX.match(text):
        raise fail(
            "syntax",
            f"{shown}: only plain decimal numbers are allowed (no hexadecimal, octal or "
            f"binary), e.g. '{example}' (accepted: {listing})",
        )
    if _COMMA.match(text):
        raise fail(
            "comma_decimal",
            f"{shown} has a comma in the number; use a decimal point and no thousands "
            f"separators, e.g. '{example}' (accepted: {listing})",
        )
    m = _NUMBER_PREFIX.match(text)
    if m is None:
        raise fail(
            "syntax",
            f"{shown} does not start with a plain number (ASCII digits); write e.g. '{example}' (accepted: {listing})",
        )
    number = m.group(0)
    rest = text[m.end() :]
    if len(number) > MAX_NUMBER_LENGTH:
        raise fail(
            "syntax",
            f"the number in {shown} is longer than {MAX_NUMBER_LENGTH} characters; "
            f"write it shorter, e.g. '{example}' (accepted: {listing})",
        )
    if not rest:
        raise fail(
            "missing_unit",
            f"a bare number ({number}) is not allowed for {phrase}; write it with a unit, "
            f"e.g. '{example}' (accepted: {listing})",
        )
    if rest[0] == " ":
        rest = rest[1:]
    if not rest or rest[0].isspace():
        raise fail(
            "syntax",
            f"{shown}: separate the number and the unit by one plain space, e.g. '{example}' (accepted: {listing})",
        )
    if rest[0] in "0123456789.,_/+-":
        raise fail(
            "syntax",
            f"{shown} is not a plain decimal number followed by a unit (no fractions, "
            f"underscores or expressions), e.g. '{example}' (accepted: {listing})",
        )
    unit = rest
    conv = table.get(unit)
    if conv is not None:  # reached after micro/ohm-sign normalisation or stripping
        mant, _, exp = number.replace("E", "e").partition("e")
        result = _convert(mant, exp or None, conv)
        if math.isfinite(result):
            return result
        raise fail(
            "non_finite",
            f"{shown} is too large to be a finite number in "
            f"{DIMENSIONS[dimension].si_unit}; write a finite {_noun(phrase)}, "
            f"e.g. '{example}' (accepted: {listing})",
        )

    case_match = _closest_case(unit, accepted)
    others = _DIMS_OF_UNIT.get(unit)
    if others:
        if dimension == "temperature_difference" and unit == "degC":
            raise fail(
                "wrong_dimension",
                f"{shown} is an absolute temperature, not a temperature difference; "
                f"differences are written in K ({_DIFFERENCE_NOTE}) (accepted: {listing})",
            )
        also = f"; did you mean {case_match}?" if case_match else ""
        raise fail(
            "wrong_dimension",
            f"{shown}: {unit} is {_PHRASE[others[0]]} unit, not {phrase} unit{also}; accepted: {listing}",
        )
    if case_match:
        raise fail(
            "case",
            f"{shown} is not {phrase} unit; did you mean {case_match}? (units are case-sensitive); accepted: {listing}",
        )
    hint = _HINTS.get(dimension, {}).get(unit) or _squash_match(unit, accepted)
    if hint:
        # a hint that names one accepted unit gives the whole value to write
        head, _, note = hint.partition(" ")
        if head in accepted and (not note or note.startswith("(")):
            hint = f"'{number} {head}'" + (f" {note}" if note else "")
        raise fail(
            "unknown_unit",
            f"{shown}: {_show(unit)} is not accepted for {phrase}; write {hint}; accepted: {listing}",
        )
    foreign, plain = foreign_letters(unit)
    if foreign:
        guess = f"; did you mean {plain}?" if plain in accepted else ""
        raise fail(
            "unknown_unit",
            f"{shown}: unknown unit {_show(unit)} for {phrase}{foreign}{guess}; accepted: {listing}",
        )
    elsewhere = _LOWER_INDEX.get(unit.lower())
    note = f" ({elsewhere[0][1]} is {_PHRASE[elsewhere[0][0]]} unit)" if elsewhere else ""
    raise fail(
        "unknown_unit",
        f"{shown}: unknown unit {_show(unit)} for {phrase}{note}; accepted: {listing}",
    )


# Letters of other scripts that look like Latin ones (the usual homoglyphs in units
# and keys); full-width forms are folded by NFKC first.
_LOOKALIKE = str.maketrans(
    "\u0410\u0412\u0415\u041a\u041c\u041d\u041e\u0420\u0421\u0422\u0425"
    "\u0430\u0435\u043e\u0440\u0441\u0443\u0445\u0455\u0456\u0458"
    "\u0391\u0392\u0395\u0396\u0397\u0399\u039a\u039c\u039d\u039f\u03a1\u03a4\u03a5\u03a7"
    "\u03bf\u03bd",
    "ABEKMHOPCTXaeopcyxsijABEZHIKMNOPTYXov",
)
# Non-ASCII characters the unit table itself uses or names in a hint.
_KNOWN_SIGNS = frozenset("\u00b5\u03bc\u03a9\u2126\u00b0\u2103\u00b2\u00b3\u00b7\u22c5\u00d7\u0394")


def foreign_letters(text: str) -> tuple[str, str | None]:
    """(a note naming the characters of ``text`` that look like ASCII but are not, or
    "", and the text with them replaced by the ASCII they imitate, or None when
    nothing would change). The micro, ohm, degree signs are not reported."""
    odd = [c for c in dict.fromkeys(text) if ord(c) > 0x7E and c not in _KNOWN_SIGNS]
    if not odd:
        return "", None
    shown = ", ".join(
        # an invisible or format character is named only, never printed
        ("" if unicodedata.category(c)[0] in "CZ" else f"'{c}' is ")
        + f"U+{ord(c):04X} {unicodedata.name(c, 'an unnamed character')}"
        for c in odd[:3]
    )
    plain = unicodedata.normalize("NFKC", text).translate(_LOOKALIKE)
    return f" ({shown}, not an ASCII character)", (plain if plain != text and plain.isascii() else None)


def _closest_case(unit: str, accepted: tuple[str, ...]) -> str | None:
    """The accepted unit equal to ``unit`` but for letter case, if any.

    When two differ only in case from each other too (mohm, Mohm), the one agreeing
    with ``unit`` in more letters wins ("mOhm" -> mohm); a tie names both.
    """
    low = unit.lower()
    found = [a for a in accepted if a.lower() == low]
    if not found:
        return None
    score = {a: sum(x == y for x, y in zip(a, unit, strict=False)) for a in found}
    best = max(score.values())
    winners = [a for a in found if score[a] == best]
    return " or ".join(winners)


def _squash_match(unit: str, accepted: tuple[str, ...]) -> str | None:
    """An accepted unit that ``unit`` spells with other separators ("Nm" -> N*m)."""
    squashed = unit.translate(_SQUASH)
    for a in accepted:
        if a.translate(_SQUASH) == squashed:
            return a
    low = squashed.lower()
    found = [a for a in accepted if a.translate(_SQUASH).lower() == low]
    return found[0] if len(found) == 1 else None


def _four_digits(x: float) -> str:
    text = repr(float(f"{x:.4g}") + 0.0)  # + 0.0 turns -0.0 into 0.0
    return text[:-2] if text.endswith(".0") else text


def format_si(value: float, dimension: str) -> str:
    """Display an SI value of ``dimension`` in a readable unit, 4 significant digits.

    9.5e-05 (inductance) -> "95 uH"; 313.15 (temperature) -> "40 degC";
    0.0021 (resistance) -> "2.1 mohm". The text parses back with ``parse_quantity``.
    """
    _table(dimension)
    display = _DISPLAY[dimension]
    value = float(value)
    if not math.isfinite(value):
        return f"{value} {DIMENSIONS[dimension].si_unit}"
    if len(display) == 1:
        unit, conv = display[0]
    else:
        # Choose on the rounded value so that 999.96 uH shows as "1 mH", not "1000 uH".
        magnitude = abs(float(f"{value:.4g}"))
        unit, conv = display[0]
        if magnitude == 0.0:
            si = DIMENSIONS[dimension].si_unit
            unit, conv = next(((u, c) for u, c in display if u == si), display[0])
        for u, c in display:
            if magnitude >= c.factor * (1.0 - 1e-12):
                unit, conv = u, c
    shown = (value - conv.offset) / conv.factor
    return f"{_four_digits(shown)} {unit}"

"""Tests for specguard.model.units: the strict unit table and parser.

Reference for every conversion factor: pint 0.25 default registry as the reference
(``pint.UnitRegistry()``), imported only here, never by the package.
"""

from __future__ import annotations

import math
import pickle
import subprocess
import sys
from fractions import Fraction
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from specguard.model.units import (
    DIMENSIONS,
    ERROR_CODES,
    UnitError,
    accepted_units,
    format_si,
    parse_quantity,
)

pint = pytest.importorskip("pint")

# pint 0.25 default registry as the reference; built once for the module.
UREG = pint.UnitRegistry()
Q = UREG.Quantity

ALL_UNITS = [(d, u) for d in DIMENSIONS for u in accepted_units(d)]
UNIT_IDS = [f"{d}:{u}" for d, u in ALL_UNITS]

# Our unit text -> the pint expression for the same unit, where the spellings differ
# or where we want pint to build the unit from parts instead of an alias.
PINT_EXPRESSION = {
    "V/krpm": "V/(1000*rpm)",
    "krpm": "1000*rpm",
}
# Offset units are converted with Q(value, unit).to(...), never Q("40 degC").
OFFSET_UNITS = {"degC"}

DERANDOMIZED = settings(derandomize=True, max_examples=1000, deadline=None, database=None)


def pint_to_si(value: float, dimension: str, unit: str) -> float:
    si = DIMENSIONS[dimension].si_unit
    if unit in OFFSET_UNITS:
        return Q(value, unit).to(si).magnitude
    expression = PINT_EXPRESSION.get(unit, unit)
    return (value * UREG.parse_expression(expression)).to(si).magnitude


# --- the table -------------------------------------------------------------------------

REQUIRED = {
    "voltage": ("V", {"V", "mV", "kV"}),
    "current": ("A", {"A", "mA", "uA"}),
    "resistance": (
        "ohm",
        {"ohm", "mohm", "kohm", "Mohm", "\u03a9", "m\u03a9", "k\u03a9", "M\u03a9"},
    ),
    "inductance": ("H", {"H", "mH", "uH", "nH"}),
    "capacitance": ("F", {"F", "mF", "uF", "nF", "pF"}),
    "frequency": ("Hz", {"Hz", "kHz", "MHz"}),
    "time": ("s", {"s", "ms", "us", "ns", "min", "h"}),
    "temperature": ("K", {"degC", "K"}),
    "temperature_difference": ("K", {"K"}),
    "speed": ("rad/s", {"rad/s", "rpm", "krpm"}),
    "back_emf_constant": ("V*s/rad", {"V/(rad/s)", "V*s/rad", "V/krpm", "mV/rpm", "V/rpm"}),
    "torque_constant": ("N*m/A", {"N*m/A", "mN*m/A"}),
    "torque": ("N*m", {"N*m", "mN*m", "uN*m"}),
    "inertia": ("kg*m^2", {"kg*m^2", "g*cm^2", "kg*cm^2", "g*m^2"}),
    "thermal_resistance": ("K/W", {"K/W"}),
    "power": ("W", {"W", "mW", "kW"}),
    "energy": ("J", {"J", "mJ", "kJ"}),
    "length": ("m", {"m", "mm", "cm", "km"}),
    "flux_linkage": ("Wb", {"Wb", "mWb"}),
    "angle": ("rad", {"rad", "deg"}),
}


@pytest.mark.parametrize("dimension", sorted(REQUIRED))
def test_dimension_has_the_agreed_units(dimension):
    si, units = REQUIRED[dimension]
    dim = DIMENSIONS[dimension]
    assert dim.name == dimension
    assert dim.si_unit == si
    assert set(accepted_units(dimension)) == units
    assert tuple(dim.units) == accepted_units(dimension)
    assert dim.units[si] == (1.0, 0.0)


@pytest.mark.parametrize("dimension", sorted(DIMENSIONS))
def test_example_parses_in_its_own_dimension(dimension):
    dim = DIMENSIONS[dimension]
    value = parse_quantity(dim.example, dimension)
    assert math.isfinite(value) and value != 0.0


def test_only_degc_has_an_offset():
    with_offset = [(d, u) for d, u in ALL_UNITS if DIMENSIONS[d].units[u][1] != 0.0]
    assert with_offset == [("temperature", "degC")]
    assert DIMENSIONS["temperature"].units["degC"] == (1.0, 273.15)


def test_table_is_read_only():
    with pytest.raises(TypeError):
        DIMENSIONS["voltage"].units["MV"] = (1e6, 0.0)  # type: ignore[index]
    with pytest.raises(TypeError):
        DIMENSIONS["speed_of_light"] = DIMENSIONS["speed"]  # type: ignore[index]


def test_unknown_dimension_is_a_programming_error():
    with pytest.raises(KeyError, match="known: voltage"):
        parse_quantity("1 V", "volts")
    with pytest.raises(KeyError):  # (an unknown name; "angle" became a dimension)
        accepted_units("luminance")
    with pytest.raises(KeyError):
        format_si(1.0, "luminance")


# --- factors against pint --------------------------------------------------------------


@pytest.mark.parametrize(("dimension", "unit"), ALL_UNITS, ids=UNIT_IDS)
def test_factor_and_offset_match_pint(dimension, unit):
    factor, offset = DIMENSIONS[dimension].units[unit]
    for value in (0.0, 1.0, 40.0, -3.7, 1234.5):
        reference = pint_to_si(value, dimension, unit)
        assert math.isclose(value * factor + offset, reference, rel_tol=1e-12, abs_tol=0.0), (
            value,
            reference,
        )


@pytest.mark.parametrize(("dimension", "unit"), ALL_UNITS, ids=UNIT_IDS)
def test_parsed_value_matches_pint(dimension, unit):
    for text in ("0.95", "120", "4.7", "-3.7e-2", "1e3", "2.5E+2", ".5", "7."):
        for separator in (" ", ""):
            got = parse_quantity(f"{text}{separator}{unit}", dimension)
            reference = pint_to_si(float(text), dimension, unit)
            assert math.isclose(got, reference, rel_tol=1e-12, abs_tol=0.0), (text, unit)


def test_known_conversions():
    # Hand-checked values; the first three are the common datasheet cases.
    assert parse_quantity("3000 rpm", "speed") == pytest.approx(100 * math.pi, rel=1e-15)
    assert parse_quantity("1 V/krpm", "back_emf_constant") == pytest.approx(60 / (2 * math.pi * 1000), rel=1e-15)
    assert parse_quantity("1 mV/rpm", "back_emf_constant") == pytest.approx(60 / (2 * math.pi * 1000), rel=1e-15)
    assert parse_quantity("40 degC", "temperature") == pytest.approx(313.15, rel=1e-15)
    assert parse_quantity("-273.15 degC", "temperature") == 0.0
    assert parse_quantity("2 h", "time") == 7200.0
    assert parse_quantity("1.5 min", "time") == 90.0


# --- exactness: decimal shift instead of multiplying by 1e-6 ----------------------------


@pytest.mark.parametrize(
    ("text", "dimension", "expected"),
    [
        ("100 uH", "inductance", 1e-4),
        ("4.7 uH", "inductance", 4.7e-6),
        ("47 uH", "inductance", 4.7e-5),
        ("2.2 nF", "capacitance", 2.2e-9),
        ("300 ns", "time", 3e-7),
        ("18 g*cm^2", "inertia", 1.8e-6),
        ("25 mohm", "resistance", 0.025),
        ("13.6 mN*m/A", "torque_constant", 0.0136),
        ("25 kHz", "frequency", 25000.0),
        ("0.1 mV", "voltage", 1e-4),
    ],
)
def test_power_of_ten_units_give_the_nearest_float(text, dimension, expected):
    # The float literal on the right is, by the language definition, the double nearest
    # to the decimal value, so equality means no rounding noise at all.
    assert parse_quantity(text, dimension) == expected


POWER_OF_TEN_UNITS = [
    (d, u)
    for d, u in ALL_UNITS
    if DIMENSIONS[d].units[u][1] == 0.0
    and Fraction(DIMENSIONS[d].units[u][0]).limit_denominator(10**15) in {Fraction(10) ** k for k in range(-12, 7)}
]


@DERANDOMIZED
@given(
    unit=st.sampled_from(POWER_OF_TEN_UNITS),
    mantissa=st.from_regex(r"[0-9]{1,8}(\.[0-9]{1,8})?", fullmatch=True),
    exponent=st.integers(min_value=-290, max_value=290),
)
def test_power_of_ten_units_round_correctly(unit, mantissa, exponent):
    dimension, name = unit
    # Python's float(Fraction) is correctly rounded: an exact reference.
    power = round(math.log10(DIMENSIONS[dimension].units[name][0]))
    exact = Fraction(mantissa) * Fraction(10) ** (exponent + power)
    assert parse_quantity(f"{mantissa}e{exponent} {name}", dimension) == float(exact)


# --- property: every unit, random floats -----------------------------------------------


@DERANDOMIZED
@given(
    unit=st.sampled_from(ALL_UNITS),
    x=st.floats(allow_nan=False, allow_infinity=False),
    space=st.booleans(),
)
def test_parse_equals_value_times_factor_plus_offset(unit, x, space):
    dimension, name = unit
    factor, offset = DIMENSIONS[dimension].units[name]
    expected = x * factor + offset
    text = f"{x!r}{' ' if space else ''}{name}"
    try:
        got = parse_quantity(text, dimension)
    except UnitError as err:
        assert err.code == "non_finite"
        assert abs(x) * factor > 0.99 * sys.float_info.max  # overflow only at the edge
        return
    if not math.isfinite(expected):
        assert abs(got) > 0.99 * sys.float_info.max
        return
    # We read the decimal text exactly, so we may differ from x*factor by the rounding
    # of the factor and of repr(x) itself: a few ulps, or less than one ulp of x scaled.
    tolerance = factor * math.ulp(x) + 2 * math.ulp(0.0)
    assert math.isclose(got, expected, rel_tol=1e-15, abs_tol=tolerance), (text, got, expected)


# --- micro signs, ohm sign, spacing, number grammar ------------------------------------

MICRO_UNITS = [(d, u) for d, u in ALL_UNITS if u.startswith("u")]


def test_micro_units_exist():
    assert {u for _, u in MICRO_UNITS} == {"uA", "uH", "uF", "us", "uN*m", "uohm*m", "uohm*cm"}


@pytest.mark.parametrize(("dimension", "unit"), MICRO_UNITS, ids=[u for _, u in MICRO_UNITS])
def test_micro_sign_spellings_are_equivalent(dimension, unit):
    plain = parse_quantity(f"4.7 {unit}", dimension)
    assert plain == pytest.approx(4.7e-6 * DIMENSIONS[dimension].units[unit][0] / 1e-6)
    for sign in ("\u00b5", "\u03bc"):  # MICRO SIGN, GREEK SMALL LETTER MU
        assert parse_quantity(f"4.7 {sign}{unit[1:]}", dimension) == plain
        assert parse_quantity(f"4.7{sign}{unit[1:]}", dimension) == plain


def test_ohm_sign_and_greek_omega_are_equivalent():
    for prefix, factor in (("", 1.0), ("m", 1e-3), ("k", 1e3), ("M", 1e6)):
        words = parse_quantity(f"2.1 {prefix}ohm", "resistance")
        assert parse_quantity(f"2.1 {prefix}\u03a9", "resistance") == words  # GREEK OMEGA
        assert parse_quantity(f"2.1 {prefix}\u2126", "resistance") == words  # OHM SIGN
        assert words == pytest.approx(2.1 * factor, rel=1e-15)


@pytest.mark.parametrize("text", ["100uH", "100 uH", " 100 uH", "100 uH  ", "\t100 uH\n"])
def test_zero_or_one_space_and_surrounding_whitespace(text):
    assert parse_quantity(text, "inductance") == 1e-4


@pytest.mark.parametrize("text", ["100  uH", "100\tuH", "100\u00a0uH", "100 \u2009uH"])
def test_other_separators_are_rejected(text):
    with pytest.raises(UnitError) as info:
        parse_quantity(text, "inductance")
    assert info.value.code == "syntax"
    assert "one plain space" in info.value.message


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("+5 V", 5.0),
        ("-5 V", -5.0),
        ("5. V", 5.0),
        (".5 V", 0.5),
        ("5e3 V", 5000.0),
        ("5E-3 V", 0.005),
        ("5e+3 V", 5000.0),
        ("0 V", 0.0),
        ("007 V", 7.0),
        ("1" * 30 + " V", float("1" * 30)),
    ],
)
def test_number_grammar_accepts(text, expected):
    assert parse_quantity(text, "voltage") == expected


@pytest.mark.parametrize(
    "text",
    [
        "1/2 V",
        "0x10 V",
        "0b101 V",
        "1_000 V",
        "5..0 V",
        "5.0.1 V",
        "\u0661\u0662 V",  # Arabic-Indic digits: float() would accept them
        "\uff11\uff12 V",  # full-width digits
        "\u22125 V",  # typographic minus sign
        "1" * 31 + " V",
        "1.25e" + "1" * 30 + " V",
        "V",
        "e3 V",
        "-",
        ".",
    ],
)
def test_number_grammar_rejects(text):
    with pytest.raises(UnitError) as info:
        parse_quantity(text, "voltage")
    assert info.value.code == "syntax"
    assert "V, mV, kV" in info.value.message


# --- traps ------------------------------------------------------------------------------

TRAPS = [
    # text, dimension, code, words the message must contain
    ("2.5 MH", "inductance", "case", "did you mean mH?"),
    ("2.5 mh", "inductance", "case", "did you mean mH?"),
    ("3000 RPM", "speed", "case", "did you mean rpm?"),
    ("5 mOhm", "resistance", "case", "did you mean mohm?"),
    ("5 MOhm", "resistance", "case", "did you mean Mohm?"),
    ("12 a", "current", "case", "did you mean A?"),
    ("25 KHZ", "frequency", "case", "did you mean kHz?"),
    ("25 kHz", "inductance", "wrong_dimension", "kHz is a frequency unit"),
    ("48 V", "current", "wrong_dimension", "V is a voltage unit"),
    ("40 degC", "temperature_difference", "wrong_dimension", "differences are written in K"),
    ("1,5 kHz", "frequency", "comma_decimal", "use a decimal point"),
    ("1,500 rpm", "speed", "comma_decimal", "no thousands separators"),
    ("1.000,5 V", "voltage", "comma_decimal", "use a decimal point"),
    ("nan V", "voltage", "non_finite", "not a finite number"),
    ("NaN V", "voltage", "non_finite", "not a finite number"),
    ("inf V", "voltage", "non_finite", "not a finite number"),
    ("-inf V", "voltage", "non_finite", "not a finite number"),
    ("Infinity V", "voltage", "non_finite", "not a finite number"),
    ("1e400 V", "voltage", "non_finite", "too large"),
    ("1e308 kV", "voltage", "non_finite", "too large"),
    ("0.95 Nm", "torque", "unknown_unit", "write '0.95 N*m'"),
    ("0.95 N m", "torque", "unknown_unit", "write '0.95 N*m'"),
    ("0.95 N\u00b7m", "torque", "unknown_unit", "write '0.95 N*m'"),
    ("23.5 mNm/A", "torque_constant", "unknown_unit", "write '23.5 mN*m/A'"),
    ("18 gcm^2", "inertia", "unknown_unit", "write '18 g*cm^2'"),
    ("0.0012 kg\u00b7m\u00b2", "inertia", "unknown_unit", "write '0.0012 kg*m^2'"),
    ("40 \u00b0C", "temperature", "unknown_unit", "write '40 degC'"),
    ("3.5 degC/W", "thermal_resistance", "unknown_unit", "write '3.5 K/W'"),
    ("3000 r/min", "speed", "unknown_unit", "write '3000 rpm'"),
    ("48 Vdc", "voltage", "unknown_unit", "write '48 V'"),
    ("4 pole", "inductance", "unknown_unit", "unknown unit 'pole'"),
    ("25 khz", "inductance", "unknown_unit", "kHz is a frequency unit"),
    ("120", "inductance", "missing_unit", "write it with a unit, e.g. '120 uH'"),
    ("", "inductance", "syntax", "empty"),
    ("   ", "inductance", "syntax", "empty"),
    ("uH", "inductance", "syntax", "does not start with a plain number"),
    ("1" * 40 + " uH", "inductance", "syntax", "longer than 30 characters"),
]


@pytest.mark.parametrize(("text", "dimension", "code", "words"), TRAPS)
def test_trap_is_rejected_with_code_and_accepted_units(text, dimension, code, words):
    with pytest.raises(UnitError) as info:
        parse_quantity(text, dimension)
    err = info.value
    assert err.code == code
    assert words in err.message
    assert "accepted: " + ", ".join(accepted_units(dimension)) in err.message
    assert err.accepted == accepted_units(dimension)
    assert err.dimension == dimension
    assert "\n" not in err.message


def test_case_message_wording():
    with pytest.raises(UnitError) as info:
        parse_quantity("2.5 MH", "inductance")
    assert info.value.message.startswith("'2.5 MH' is not an inductance unit; did you mean mH?")


@pytest.mark.parametrize("value", [2.5, 120, 0, -1, 1e-4, float("nan"), True, False])
def test_bare_python_numbers_are_missing_unit(value):
    with pytest.raises(UnitError) as info:
        parse_quantity(value, "inductance")
    err = info.value
    assert err.code == "missing_unit"
    assert "'120 uH'" in err.message
    assert "accepted: H, mH, uH, nH" in err.message


@pytest.mark.parametrize("value", [None, [1, "V"], {"value": "1 V"}, b"1 V"])
def test_other_python_types_are_syntax(value):
    with pytest.raises(UnitError) as info:
        parse_quantity(value, "voltage")
    assert info.value.code == "syntax"
    assert "accepted: V, mV, kV" in info.value.message


def test_string_subclass_is_accepted():
    # YAML loaders may hand back str subclasses for quoted scalars.
    class Quoted(str):
        pass

    assert parse_quantity(Quoted("48 V"), "voltage") == 48.0


def test_unit_error_shape():
    with pytest.raises(UnitError) as info:
        parse_quantity("2.5 MH", "inductance")
    err = info.value
    assert isinstance(err, ValueError)
    assert str(err) == err.message
    copy = pickle.loads(pickle.dumps(err))
    assert (copy.code, copy.message, copy.accepted, copy.dimension) == (
        err.code,
        err.message,
        err.accepted,
        err.dimension,
    )
    assert ERROR_CODES == {
        "missing_unit",
        "unknown_unit",
        "wrong_dimension",
        "case",
        "comma_decimal",
        "non_finite",
        "syntax",
    }
    with pytest.raises(ValueError):
        UnitError("oops", "not a code")


@DERANDOMIZED
@given(value=st.one_of(st.text(max_size=40), st.text("0123456789.,eE+- uHmkVµΩ", max_size=20)))
def test_any_text_gives_a_finite_float_or_a_unit_error(value):
    try:
        result = parse_quantity(value, "inductance")
    except UnitError as err:
        assert err.code in ERROR_CODES
        assert "\n" not in err.message
        assert "H, mH, uH, nH" in err.message
    else:
        assert math.isfinite(result)


# --- format_si ---------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("value", "dimension", "text"),
    [
        (9.5e-05, "inductance", "95 uH"),
        (313.15, "temperature", "40 degC"),
        (0.0021, "resistance", "2.1 mohm"),
        (999.96e-6, "inductance", "1 mH"),
        (0.0, "resistance", "0 ohm"),
        (-0.0, "voltage", "0 V"),
        (-48.0, "voltage", "-48 V"),
        (12345.678, "voltage", "12.35 kV"),
        (100 * math.pi, "speed", "3000 rpm"),
        (1.8e-6, "inertia", "18 g*cm^2"),
        (0.0136, "torque_constant", "13.6 mN*m/A"),
        (3e-7, "time", "300 ns"),
        (7200.0, "time", "7200 s"),
        (15.0, "temperature_difference", "15 K"),
        (float("inf"), "voltage", "inf V"),
    ],
)
def test_format_si_examples(value, dimension, text):
    assert format_si(value, dimension) == text


@DERANDOMIZED
@given(
    dimension=st.sampled_from(sorted(DIMENSIONS)),
    mantissa=st.floats(min_value=1.0, max_value=10.0),
    exponent=st.integers(min_value=-15, max_value=15),
    negative=st.booleans(),
)
def test_format_si_round_trips_to_four_digits(dimension, mantissa, exponent, negative):
    value = (-1.0 if negative else 1.0) * mantissa * 10.0**exponent
    if dimension == "temperature":
        value += 273.15  # the value in degC is the one shown with 4 digits
    text = format_si(value, dimension)
    back = parse_quantity(text, dimension)
    if dimension == "temperature":
        assert math.isclose(back - 273.15, value - 273.15, rel_tol=5e-4, abs_tol=1e-9)
    else:
        assert math.isclose(back, value, rel_tol=5e-4)
    assert format_si(back, dimension) == text


# --- package hygiene and speed -----------------------------------------------------------


def test_module_does_not_import_pint():
    root = Path(__file__).resolve().parents[1]
    code = (
        "import sys, specguard.model.units; "
        "bad = [m for m in sys.modules if m == 'pint' or m.startswith('pint.')]; "
        "print(bad); sys.exit(1 if bad else 0)"
    )
    result = subprocess.run([sys.executable, "-c", code], cwd=root, capture_output=True, text=True, check=False)
    assert result.returncode == 0, result.stdout + result.stderr
    assert result.stdout.strip() == "[]"

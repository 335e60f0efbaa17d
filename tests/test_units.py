"""Units: chemists' notation, exact factors, dimensions, temperatures.

Reference values are the SI definitions (BIPM, The International System of Units,
9th edition, 2019): 1 min = 60 s, 1 h = 3600 s, 1 d = 86400 s, 1 L = 1 dm^3 =
1e-3 m^3, T/K = t/degC + 273.15; the thermochemical calorie is 4.184 J exactly
(NIST SP 811, 2008); R = N_A k (CODATA 2018, exact).
"""

from __future__ import annotations

import re
import subprocess
import sys
from fractions import Fraction

import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from kinetics.units import (
    COMMON_UNITS,
    GAS_CONSTANT,
    MAX_EXPONENT,
    MAX_UNIT_LENGTH,
    concentration_order,
    convert,
    describe_dimension,
    normalise_unit,
    parse_unit,
    parse_unit_by_pint,
    registry,
    temperature_to_kelvin,
)


@pytest.mark.parametrize(
    ("written", "pint_form"),
    [
        ("M-1 s-1", "M**-1*s**-1"),
        ("L mol-1 s-1", "L*mol**-1*s**-1"),
        ("s⁻¹", "s**-1"),
        ("M⁻¹ s⁻¹", "M**-1*s**-1"),
        ("s^-1", "s**-1"),
        ("s ** -1", "s**-1"),
        ("mol/L/min", "mol/L/min"),
        ("mol·L⁻¹", "mol*L**-1"),
        ("M-1s-1", "M**-1*s**-1"),
        ("(mol/L)-1 s-1", "(mol/L)**-1*s**-1"),
        ("µmol/L", "umol/L"),
        ("μM", "uM"),
        ("°C", "degC"),
        ("m3", "m**3"),
    ],
)
def test_normalise_unit(written, pint_form):
    assert normalise_unit(written) == pint_form


@pytest.mark.parametrize(
    ("unit", "factor", "dims"),
    [
        ("1/s", Fraction(1), {"[time]": -1}),
        ("s-1", Fraction(1), {"[time]": -1}),
        ("min-1", Fraction(1, 60), {"[time]": -1}),
        ("h-1", Fraction(1, 3600), {"[time]": -1}),
        ("d-1", Fraction(1, 86400), {"[time]": -1}),
        ("1/ms", Fraction(1000), {"[time]": -1}),
        ("M", Fraction(1000), {"[substance]": 1, "[length]": -3}),
        ("mol/L", Fraction(1000), {"[substance]": 1, "[length]": -3}),
        ("mmol/L", Fraction(1), {"[substance]": 1, "[length]": -3}),
        ("mM", Fraction(1), {"[substance]": 1, "[length]": -3}),
        ("nM", Fraction(1, 10**6), {"[substance]": 1, "[length]": -3}),
        ("mol dm-3", Fraction(1000), {"[substance]": 1, "[length]": -3}),
        ("M-1 s-1", Fraction(1, 1000), {"[substance]": -1, "[length]": 3, "[time]": -1}),
        ("L mol-1 s-1", Fraction(1, 1000), {"[substance]": -1, "[length]": 3, "[time]": -1}),
        ("mol/L/min", Fraction(1000, 60), {"[substance]": 1, "[length]": -3, "[time]": -1}),
        ("g/mol", Fraction(1, 1000), {"[mass]": 1, "[substance]": -1}),
        ("kJ/mol", Fraction(1000), {"[mass]": 1, "[length]": 2, "[time]": -2, "[substance]": -1}),
        ("kcal/mol", Fraction(4184), {"[mass]": 1, "[length]": 2, "[time]": -2, "[substance]": -1}),
        ("", Fraction(1), {}),
        ("%", Fraction(1, 100), {}),
    ],
)
def test_exact_factors_and_dimensions(unit, factor, dims):
    spec = parse_unit(unit)
    assert spec.factor == factor
    assert spec.dims == dims
    assert not spec.offset
    assert spec.text == unit


def test_offset_units_are_flagged():
    assert parse_unit("degC").offset
    assert parse_unit("°C").offset
    assert not parse_unit("K").offset


@pytest.mark.parametrize(
    "bad",
    [
        "sek-1",
        "per s",
        "2^99999",
        "min-99",
        f"s^{MAX_EXPONENT + 1}",
        "((min^12)^12)^12",
        "1e5",
        "s*2",
        "1/0",
        "(",
        "M B = 2 M",
    ],
)
def test_unknown_or_unsafe_units_raise_value_error(bad):
    with pytest.raises(ValueError):  # noqa: PT011 - callers turn it into a located error
        parse_unit(bad)


def test_largest_allowed_exponent_is_accepted():
    assert parse_unit(f"m{MAX_EXPONENT}").dims == {"[length]": MAX_EXPONENT}


def test_convert_rounds_once():
    assert convert(90.0, "min", "h") == 1.5
    # a float argument is taken at its exact binary value, then divided exactly:
    assert convert(0.7, "1/min", "1/s") == float(Fraction(0.7) / 60)
    assert convert(250.0, "mmol/L", "M") == 0.25
    assert convert(1.0, "d", "s") == 86400.0


def test_convert_refuses_different_dimensions_and_offsets():
    with pytest.raises(ValueError, match=r"cannot convert 'mol' .* to 'mol/L'"):
        convert(1.0, "mol", "mol/L")
    with pytest.raises(ValueError, match="temperature_to_kelvin"):
        convert(1.0, "degC", "K")


@pytest.mark.parametrize(
    ("value", "unit", "kelvin"),
    [
        (25.0, "degC", 298.15),
        (Fraction(60), "°C", 333.15),
        (-10.0, "degC", 263.15),
        (300.0, "K", 300.0),
        (32.0, "degF", 273.15),  # 32 degF = 0 degC (NIST SP 811)
        (212.0, "degF", 373.15),
    ],
)
def test_temperature_to_kelvin(value, unit, kelvin):
    assert temperature_to_kelvin(value, unit) == pytest.approx(kelvin, rel=1e-15, abs=1e-12)


def test_temperature_to_kelvin_refuses_other_units():
    with pytest.raises(ValueError, match="is not a temperature unit"):
        temperature_to_kelvin(1.0, "s")


@pytest.mark.parametrize(
    ("unit", "order"),
    [
        ("1/s", 0),
        ("min-1", 0),
        ("M-1 s-1", 1),
        ("L mol-1 s-1", 1),
        ("L2 mol-2 s-1", 2),
        ("mol-1 s-1", 1),  # files in amounts
        ("m", None),
        ("M s-1", None),
        ("M-1", None),
        ("s", None),
    ],
)
def test_concentration_order(unit, order):
    spec = parse_unit(unit)
    assert concentration_order(spec.dims) == order
    assert spec.rate_order == order


@pytest.mark.parametrize(
    ("unit", "phrase"),
    [
        ("1/s", "a frequency (1/time)"),
        ("mol/L", "a concentration (amount/volume)"),
        ("mol", "an amount of substance"),
        ("g/mol", "a molar mass"),
        ("kJ/mol", "a molar energy"),
        ("K", "a temperature"),
        ("m", "a length"),
        ("M-1 s-1", "a rate constant of order 2 (concentration^-1/time)"),
        ("A", "the dimension current^1"),
    ],
)
def test_describe_dimension(unit, phrase):
    assert describe_dimension(parse_unit(unit).dims) == phrase


def test_gas_constant_is_avogadro_times_boltzmann():
    # CODATA 2018 / SI 2019: N_A = 6.02214076e23 1/mol, k = 1.380649e-23 J/K, both exact
    exact = Fraction("6.02214076e23") * Fraction("1.380649e-23")
    assert GAS_CONSTANT == float(exact)


def test_parse_unit_is_cached():
    assert parse_unit("L mol-1 s-1") is parse_unit("L mol-1 s-1")


def test_pint_text_keeps_what_pint_reads_and_rewrites_the_rest():
    from kinetics.units import pint_text

    assert pint_text("mmol/L") == "mmol/L"
    assert pint_text("M") == "M"
    assert pint_text("mmol L-1") == "mmol*L**-1"
    assert pint_text("mol dm-3") == "mol*dm**-3"


# -- the table of common units read without pint -----------------------------------------


@pytest.mark.parametrize("symbol", sorted(COMMON_UNITS))
def test_every_common_unit_reads_as_pint_reads_it(symbol):
    # reference: pint's own definitions file (parse_unit_by_pint builds its registry)
    assert parse_unit(symbol) == parse_unit_by_pint(symbol)
    assert parse_unit_by_pint(symbol).factor == COMMON_UNITS[symbol][1]


@pytest.mark.parametrize(
    "unit",
    [
        "L mol-1 s-1",
        "M-1 s-1",
        "mol/L/min",
        "(mol/L)-1 s-1",
        "mol dm-3",
        "1/min",
        "h-1",
        "kJ/mol",
        "kcal mol-1",
        "L2 mol-2 s-1",
        "g/mol",
        "umol/L/h",
        "mol/(L*s)",
        "mol/L*s",
        "s/1",
        f"m{MAX_EXPONENT}",
        "(min^12)^2",
        "min^12 minute^12 min",  # pint adds the powers of one unit: 25 > 2 * MAX_EXPONENT
    ],
)
def test_combinations_of_common_units_read_as_pint_reads_them(unit):
    try:
        expected = parse_unit_by_pint(unit)
    except ValueError as exc:
        with pytest.raises(ValueError, match=re.escape(str(exc))):
            parse_unit.__wrapped__(unit)
    else:
        assert parse_unit.__wrapped__(unit) == expected


_ATOMS = sorted(k for k in COMMON_UNITS if k != "%")


@st.composite
def _pint_expressions(draw, depth=2):
    pieces = [draw(st.sampled_from([*_ATOMS, "1"]))]
    for _ in range(draw(st.integers(0, 3))):
        pieces.append(draw(st.sampled_from(["*", "/"])))
        if depth and draw(st.booleans()):
            pieces.append("(" + draw(_pint_expressions(depth=depth - 1)) + ")")
        else:
            pieces.append(draw(st.sampled_from(_ATOMS)))
        if draw(st.booleans()):
            pieces.append(f"**{draw(st.integers(-3, 3))}")
    return "".join(pieces)


@settings(max_examples=150, deadline=None)
@given(_pint_expressions())
def test_random_products_of_common_units_read_as_pint_reads_them(unit):
    # reference: pint (an independent reader of the same expression); longer units are
    # refused before either reader sees them (tested with the language limits)
    assume(len(unit) <= MAX_UNIT_LENGTH)
    try:
        expected = parse_unit_by_pint(unit)
    except ValueError:
        with pytest.raises(ValueError):  # noqa: PT011 - both readers refuse it
            parse_unit.__wrapped__(unit)
    else:
        assert parse_unit.__wrapped__(unit) == expected


@pytest.mark.parametrize("unit", ["degC", "°C", "degF", "K", "kelvin"])
@pytest.mark.parametrize("value", [25.0, -40.0, 0.1, Fraction(1, 3), 1e300])
def test_temperatures_without_pint_agree_with_pint(unit, value):
    # reference: pint's conversion to kelvin in exact rational arithmetic
    assert parse_unit(unit) == parse_unit_by_pint(unit)
    ureg = registry()
    exact = ureg.Quantity(Fraction(value), normalise_unit(unit)).to("kelvin").magnitude
    assert temperature_to_kelvin(value, unit) == float(exact)


def test_common_units_do_not_load_pint():
    code = (
        "import sys\nfrom kinetics.units import parse_unit, pint_text, temperature_to_kelvin\n"
        "for u in ['1/min', 'min-1', 'M-1 s-1', 'mol/L', 'h', 'kJ/mol', 'degC', 'umol/L/h']:\n"
        "    parse_unit(u)\n"
        "pint_text('mol/L')\ntemperature_to_kelvin(45.0, 'degC')\n"
        "assert 'pint' not in sys.modules"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=False)
    assert done.returncode == 0, done.stderr


# ---------------------------------------------------------------------------------------
# long units, mass ratios, durations and time lists (issue 12)


def test_a_unit_longer_than_the_limit_is_refused_before_pint_reads_it():
    from kinetics.units import MAX_UNIT_LENGTH

    with pytest.raises(ValueError, match="a unit has at most 60 characters; this one has 40,004"):
        parse_unit("1/s " + "x" * 40_000)
    assert MAX_UNIT_LENGTH == 60


@pytest.mark.parametrize(
    ("unit", "ratio"),
    [
        ("mg/kg", True),
        ("ug/g", True),
        ("mg kg-1", True),
        ("%", False),
        ("ppm", False),
        ("mg/L", False),
        ("mol/kg", False),
        ("1/s", False),
        ("nonsense", False),
    ],
)
def test_mass_ratio(unit, ratio):
    from kinetics.units import is_mass_ratio

    assert is_mass_ratio(unit) is ratio


@pytest.mark.parametrize(
    ("text", "seconds", "unit"),
    [
        # SI brochure (9th ed.): min, h, d; a year of 365.25 d and a week of 7 d are
        # pint's definitions (common practice, no source)
        ("90 min", 5400.0, "min"),
        ("2h", 7200.0, "h"),
        ("2 weeks", 1_209_600.0, "weeks"),
        ("1 year", 31_557_600.0, "year"),
        ("5 yr", 157_788_000.0, "yr"),
        ("1e300 s", 1e300, "s"),
    ],
)
def test_parse_duration(text, seconds, unit):
    from kinetics.units import parse_duration

    assert parse_duration(text) == (seconds, unit)


UNITS_HINT = (
    "use s, min, h, d, week, month (1/12 year), year (365.25 d; also yr or a), or prefixed "
    "seconds such as ms and us"
)


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("-300 min", "--until '-300 min' is not a positive duration; write e.g. --until '90 min'"),
        ("0 min", "--until '0 min' is not a positive duration; write e.g. --until '90 min'"),
        ("inf min", "--until 'inf min' is not a finite duration; write e.g. --until '90 min'"),
        ("nan min", "--until 'nan min' is not a number; write e.g. --until '90 min'"),
        (
            "1e999 s",
            "--until '1e999 s' is not a finite duration (beyond the range of double "
            "precision, about 1.8e308); write e.g. --until '90 min'",
        ),
        (
            "1e306 year",
            "--until '1e306 year' is beyond the range of double precision in seconds (about "
            "1.8e308 s); write e.g. --until '90 min'",
        ),
        ("5y", f"--until '5y': unknown time unit 'y'; {UNITS_HINT}"),
        ("3 furlong", f"--until '3 furlong': 'furlong' is not a unit of time; {UNITS_HINT}"),
        ("90", "--until '90' is not a duration with a unit; write e.g. --until '90 min'"),
        (  # quotes are cut at 60 characters
            "1 " + "s" * 100_000,
            "--until '1 "
            + "s" * 58
            + "… (100,002 characters)': unknown time unit '"
            + "s" * 60
            + "… (100,000 characters)'; "
            + UNITS_HINT,
        ),
    ],
)
def test_duration_messages_quote_what_was_typed(text, message):
    from kinetics.errors import UsageError
    from kinetics.units import parse_duration

    with pytest.raises(UsageError) as info:
        parse_duration(text)
    assert str(info.value) == message


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("0,-5 min", "--times '0,-5 min': -5 min is negative; times start at 0 (the start values)"),
        (
            "0,inf min",
            "--times '0,inf min': inf min is not a finite time; write e.g. --times '0,5,10,30 min'",
        ),
        (
            "0,10,5 min",
            "--times '0,10,5 min': the times are not in increasing order (10 min comes before "
            "5 min); sort the time list",
        ),
        ("a,b min", "--times 'a,b min': 'a' is not a number; write e.g. --times '0,5,10,30 min'"),
        (
            "0,,5 min",
            "--times '0,,5 min' has an empty item (a comma too many?); write e.g. --times "
            "'0,5,10,30 min'",
        ),
        (
            "0,5,10",
            "--times '0,5,10' does not end with a unit of time; write e.g. --times "
            "'0,5,10,30 min' (unit once, at the end)",
        ),
    ],
)
def test_time_list_messages_quote_the_times_in_their_unit(text, message):
    from kinetics.errors import UsageError
    from kinetics.units import parse_time_list

    with pytest.raises(UsageError) as info:
        parse_time_list(text)
    assert str(info.value) == message


def test_time_list_in_seconds():
    from kinetics.units import parse_time_list

    assert parse_time_list("0, 5 , 10 min") == ([0.0, 300.0, 600.0], "min")


def test_time_factor_lists_the_units_of_time():
    from kinetics.errors import UsageError
    from kinetics.units import time_factor

    assert time_factor("week") == 604_800.0
    with pytest.raises(UsageError) as info:
        time_factor("y")
    assert str(info.value) == f"unknown time unit 'y'; {UNITS_HINT}"


@pytest.mark.parametrize(
    ("unit", "kind", "message"),
    [
        ("sek-1", "UnknownUnitError", "unknown unit 'sek-1'"),
        ("s^-99", "UnitError", "the exponent -99 is too large"),
        ("1e-3", "UnitError", "cannot read '1e-3' in a unit"),
        ("12", "UnitError", "'12' is a number, not a unit"),
        ("(min^12)^12", "UnitError", "the exponents in '(min^12)^12' are too large"),
    ],
)
def test_parse_unit_raises_typed_errors(unit, kind, message):
    # readers choose their wording by the type of the error, never by its text
    from kinetics import errors

    with pytest.raises(errors.UnitError) as info:
        parse_unit(unit)
    assert type(info.value).__name__ == kind
    assert str(info.value) == message

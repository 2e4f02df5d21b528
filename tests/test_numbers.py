"""Exact numbers read from text (issue 2)."""

from fractions import Fraction

import pytest
from hypothesis import given, strategies as st

from exactlp.errors import InputError, NumberError
from exactlp.numbers import format_decimal, format_number, parse_bound, parse_number, to_fraction


@pytest.mark.parametrize(
    "text, value",
    [
        ("0.1", Fraction(1, 10)),
        ("3/4", Fraction(3, 4)),
        ("-3/4", Fraction(-3, 4)),
        ("+7", Fraction(7)),
        ("1.5e-3", Fraction(3, 2000)),
        ("1e3", Fraction(1000)),  # PyYAML's YAML 1.1 rules would leave this a string
        ("2.5E+2", Fraction(250)),
        (".5", Fraction(1, 2)),
        ("5.", Fraction(5)),
        ("  42  ", Fraction(42)),
        ("0.30000000000000004", Fraction(30000000000000004, 10**17)),
        ("6/4", Fraction(3, 2)),
        ("-0", Fraction(0)),
    ],
)
def test_parse_number_is_exact(text, value):
    got = parse_number(text)
    assert type(got) is Fraction
    assert got == value


def test_tenth_is_not_the_binary_float():
    assert parse_number("0.1") != Fraction(0.1)
    assert parse_number("0.1") * 10 == 1


@pytest.mark.parametrize(
    "text, message",
    [
        ("nan", "'nan' is not a number"),
        ("inf", "'inf' is not allowed here: infinity is only allowed as a bound"),
        ("-inf", "'-inf' is not allowed here: infinity is only allowed as a bound"),
        ("1/0", "'1/0' divides by zero"),
        ("1e401", "'1e401' has exponent 401, beyond the limit of ±400"),
        ("1e-9999", "'1e-9999' has exponent -9999, beyond the limit of ±400"),
        ("abc", "'abc' is not a number"),
        ("", "'' is not a number"),
        ("1/2/3", "'1/2/3' is not a number"),
        ("0x10", "'0x10' is not a number"),
        ("1_000", "'1_000' is not a number (did you mean '1000'?)"),
        ("-2_500.5e3", "'-2_500.5e3' is not a number (did you mean '-2500.5e3'?)"),
        ("_", "'_' is not a number"),
        ("1" * 401, "number has 401 characters, more than the limit of 400"),
    ],
)
def test_parse_number_errors(text, message):
    with pytest.raises(NumberError) as exc:
        parse_number(text)
    assert exc.value.message == message


def test_the_limits_themselves_are_allowed():
    # the caps refuse what is past them (above), not what is at them
    assert parse_number("1" * 400) == (10**400 - 1) // 9
    assert parse_number("1e400") == 10**400 and parse_number("-1e-400") == Fraction(-1, 10**400)
    assert type(parse_number("1e400")) is Fraction


def test_bounds_accept_infinity():
    assert parse_bound("inf") == "+inf"
    assert parse_bound("-inf") == "-inf"
    assert parse_bound("12.5") == Fraction(25, 2)
    for text, message in [
        (".inf", "'.inf' is not a number (did you mean 'inf'?)"),
        ("-.Inf", "'-.Inf' is not a number (did you mean '-inf'?)"),
        ("null", "'null' is not a number (leave the key out for no bound)"),
        ("", "'' is not a number (leave the key out for no bound)"),
    ]:
        with pytest.raises(NumberError) as exc:
            parse_bound(text)
        assert str(exc.value) == message


def test_to_fraction_refuses_floats_and_says_how():
    with pytest.raises(NumberError) as exc:
        to_fraction(0.1, "coefficient")
    assert exc.value.message == (
        "coefficient: the float 0.1 is not exact; pass it as text ('0.1') or as a Fraction "
        "to say exactly which number is meant"
    )
    assert to_fraction("0.1") == Fraction(1, 10)
    assert to_fraction(3) == Fraction(3)
    from gmpy2 import mpq

    got = to_fraction(mpq(-3, 4))  # an exact type with integer numerator and denominator
    assert type(got) is Fraction and got == Fraction(-3, 4)

    class Half:  # a numerator without a denominator is no number
        numerator = 1

    with pytest.raises(NumberError) as exc:
        to_fraction(Half(), "share")
    assert exc.value.message.startswith("share: <") and exc.value.message.endswith("(Half) is not an exact number")
    with pytest.raises(NumberError):
        to_fraction(True)


@pytest.mark.parametrize("value, text", [(Fraction(3), "3"), (Fraction(-7, 4), "-7/4"), (Fraction(0), "0")])
def test_format_number(value, text):
    assert format_number(value) == text


@pytest.mark.parametrize(
    "value, digits, text",
    [
        (Fraction(1, 3), 5, "0.33333"),
        (Fraction(2, 3), 5, "0.66667"),
        (Fraction(-46475314286, 10**8), 11, "-464.75314286"),
        (Fraction(5, 2), 1, "2"),  # half to even, on the exact value
        (Fraction(7, 2), 1, "4"),
        (Fraction(1, 10**8), 3, "1e-8"),
        (Fraction(999999), 3, "1e+6"),
        (Fraction(0), 5, "0"),
        # the edges of each form, worked by hand: 1 itself; the exponent e = digits - 1,
        # the last written in full (no decimal point), and e = digits, the first with
        # an exponent; e = -5, the last written as a plain decimal, and e = -6
        (Fraction(1), 12, "1"),
        (Fraction(-1), 3, "-1"),
        (Fraction(123456789012), 12, "123456789012"),
        (Fraction(123456789012, 10), 12, "12345678901.2"),  # one place after the point
        (Fraction(1234567890123), 12, "1.23456789012e+12"),
        (Fraction(12, 10**6), 12, "0.000012"),
        (Fraction(1, 10**6), 12, "1e-6"),
        (Fraction(15 * 10**19), 12, "1.5e+20"),
        (Fraction(-25, 10**7), 2, "-2.5e-6"),
        # 9.9999999999999 to 12 digits rounds up into a new digit: 10, not 10.0000000000
        (Fraction(99999999999999, 10**13), 12, "10"),
        (Fraction(-99999999999999, 10**13), 12, "-10"),
    ],
)
def test_format_decimal_rounds_the_exact_value(value, digits, text):
    assert format_decimal(value, digits) == text


@given(st.fractions(max_denominator=10**12))
def test_format_then_parse_round_trips(f):
    assert parse_number(format_number(f)) == f


@given(st.decimals(allow_nan=False, allow_infinity=False, places=None))
def test_decimal_text_reads_exactly(d):
    text = str(d)
    if "E" in text and abs(d.adjusted()) > 390:
        return
    assert parse_number(text) == Fraction(d)


@given(st.text(max_size=40))
def test_any_text_gives_a_number_or_our_error(text):
    try:
        assert type(parse_number(text)) is Fraction
    except InputError:
        pass


def test_numbers_longer_than_the_interpreter_conversion_guard():
    # CPython refuses int <-> str beyond about 4,300 digits; exact results can be longer
    big = Fraction(7**20000 + 1, 3**9000)
    text = format_number(big)
    assert len(text) > 20000
    from exactlp.limits import Limits

    back = parse_number(text, Limits(max_number_chars=100_000))
    assert back == big and type(back) is Fraction
    assert parse_number("1" * 5000 + ".5", Limits(max_number_chars=10_000)) == Fraction((10**5000 - 1) // 9 * 10 + 5, 10)
    assert format_decimal(big, 5).startswith("1.") or "e+" in format_decimal(big, 5)


def test_model_numbers_stay_short_but_certificates_may_be_long():
    from exactlp.io import model_from_text
    from exactlp.verifier import verify

    m = model_from_text("minimize: x\nvariables:\n  x: {lower: 0}\nconstraints:\n  c: x >= 0\n")
    r = __import__("exactlp").solve(m)
    from exactlp.certificate import build_certificate

    cert = build_certificate(m, r)
    long_zero = "0/" + "1" * 900  # 0 written with a 900-digit denominator: still exactly 0
    cert["primal"]["x"] = long_zero
    assert verify(m, cert).valid
    with pytest.raises(NumberError):
        parse_number(long_zero)  # in a model, the 400-character cap applies


@pytest.mark.parametrize("path", ["as installed", "slots", "constructor"])
def test_mpq_to_fraction_keeps_type_and_value(path, monkeypatch):
    # the solver's boundary conversion skips the second gcd (an mpq is already in
    # lowest terms); it must equal the normalising constructor on every sign and
    # size, by each of its routes (whichever this Python offers is "as installed";
    # "constructor": the keyword that skips normalising up to 3.11, the plain
    # constructor after it)
    from fractions import Fraction

    from gmpy2 import mpq

    from exactlp.solver import form

    from .helpers import fraction_route

    fraction_route(path, monkeypatch)
    frac = form.frac
    values = [mpq(0), mpq(-0), mpq(1), mpq(-6, 4), mpq(10**60 + 1, 3 * 10**40), mpq(-(2**521 - 1), 2**127 - 1)]
    for v in values:
        f = frac(v)
        assert type(f) is Fraction
        reference = Fraction(int(v.numerator), int(v.denominator))
        assert f == reference and hash(f) == hash(reference) and str(f) == str(reference)
        assert (f.numerator, f.denominator) == (int(v.numerator), int(v.denominator))
        assert type(f.numerator) is int and type(f.denominator) is int
        assert f + Fraction(1, 3) == reference + Fraction(1, 3)
    assert frac(mpq(0)) == 0 and frac(mpq(-6, 4)) == Fraction(-3, 2)


# --- where a float may appear in the package ---------------------------------------------
# Every call of float() in exactlp, by (file, function), with the reason it is off the
# path from model file to certificate. A new one fails this test until it is listed
# here with its reason (and reviewed as such).
FLOAT_CALLS = {
    ("bench.py", "run"): "the label 'HiGHS's own reading agrees' beside an already certified objective",
    ("floatlp.py", "_arrays"): "infinity in the float copy handed to HiGHS, which only suggests a basis",
    ("floatlp.py", "start_highs"): "HiGHS's wall-clock time limit; no model number",
    ("solver/refine.py", "_solve"): "the size of a float solve, which only sets a step's bits; every answer is checked exactly",
}
# Modules on the path from model file to certificate: no float() call and no float literal.
EXACT_MODULES = [
    "numbers.py", "expr.py", "model.py", "reform.py", "stages.py", "io/__init__.py", "io/mps.py",
    "io/yaml_model.py", "io/yamltree.py", "certificate.py", "verifier.py", "audit.py", "report_check.py",
    "reports.py", "analysis.py", "solver/form.py", "solver/basis.py", "solver/simplex.py", "solver/dual.py",
    "solver/pricing.py", "solver/events.py", "solver/rows.py", "solver/lowest.py", "solver/shadow.py",
    "solver/steer.py", "solver/whole.py",
]


def _float_uses(path):
    import ast

    tree = ast.parse(path.read_text())
    owner = {}
    for node in ast.walk(tree):
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
            for sub in ast.walk(node):
                owner.setdefault(id(sub), node.name)
    calls, literals = [], []
    for node in ast.walk(tree):
        if isinstance(node, ast.Call) and isinstance(node.func, ast.Name) and node.func.id == "float":
            calls.append(owner.get(id(node), "<module>"))
        elif isinstance(node, ast.Constant) and type(node.value) is float:
            literals.append(node.lineno)
    return calls, literals


def test_float_calls_are_only_the_listed_ones_and_the_exact_modules_have_none():
    from pathlib import Path

    import exactlp

    root = Path(exactlp.__file__).parent
    found = set()
    for path in sorted(root.rglob("*.py")):
        calls, _ = _float_uses(path)
        found |= {(path.relative_to(root).as_posix(), f) for f in calls}
    assert found == set(FLOAT_CALLS)
    for name in EXACT_MODULES:
        calls, literals = _float_uses(root / name)
        assert (name, calls, literals) == (name, [], [])


def test_short_texts_read_through_the_cache_as_without_it(monkeypatch):
    # numbers of at most _CACHED_CHARS characters are read through a cache keyed
    # by the text and the limits: the same values, types and errors as uncached,
    # and a text read under other limits is read again under those
    import dataclasses

    from exactlp import numbers
    from exactlp.limits import DEFAULT_LIMITS

    texts = ["0.1", "3/4", "-3/4", " 42 ", "1e3", "1.5e-3", "6/4", "1e401", "1/0", "abc", "1_000", "2" * 40]
    tight = dataclasses.replace(DEFAULT_LIMITS, max_exponent=2)

    def read(text, limits):
        try:
            got = parse_number(text, limits)
            return type(got), got
        except NumberError as e:
            return "error", e.message

    cached = [read(t, lim) for _ in range(2) for lim in (DEFAULT_LIMITS, tight) for t in texts]
    assert numbers._parse_short.cache_info().hits > 0
    monkeypatch.setattr(numbers, "_CACHED_CHARS", 0)
    numbers._parse_short.cache_clear()
    plain = [read(t, lim) for _ in range(2) for lim in (DEFAULT_LIMITS, tight) for t in texts]
    assert numbers._parse_short.cache_info().currsize == 0
    assert cached == plain
    assert read("1e3", tight) == ("error", "'1e3' has exponent 3, beyond the limit of ±2")
    assert read("1e3", DEFAULT_LIMITS) == (Fraction, Fraction(1000))

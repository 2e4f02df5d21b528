"""Exact numbers: reading them from text and writing them back.

Every number in a model, certificate or log is read from its *text*:
``0.1`` is exactly ``Fraction(1, 10)``, never the binary float nearest to
it.  The grammar accepted (after optional surrounding blanks)::

    number   := sign? ( decimal exponent? | integer "/" integer )
    decimal  := digits ( "." digits? )? | "." digits
    exponent := ("e" | "E") sign? digits
    sign     := "+" | "-"

``inf``/``-inf`` (also ``+inf``, ``infinity``) are accepted only where a
bound is read (:func:`parse_bound`).  ``nan``, division by zero, over-long
texts and exponents beyond :attr:`Limits.max_exponent` are errors.

Written numbers (:func:`format_number`) are the integer, or ``p/q`` in
lowest terms with a positive denominator: one spelling for each value.
"""

from __future__ import annotations

import re
from fractions import Fraction
from functools import lru_cache

from .errors import NumberError
from .limits import DEFAULT_LIMITS, Limits

_NUMBER = re.compile(
    r"""
    (?P<sign>[+-])?
    (?:
        (?P<num>[0-9]+)/(?P<den>[0-9]+)
      |
        (?P<int>[0-9]*)(?:\.(?P<frac>[0-9]*))?(?:[eE](?P<exp>[+-]?[0-9]+))?
    )
    """,
    re.VERBOSE,
)

_INF_WORDS = {"inf", "+inf", "infinity", "+infinity"}

# CPython refuses int <-> str conversions beyond a few thousand digits (a guard
# against slow quadratic conversions).  Exact results can be longer, so long
# digit strings are converted in halves; the caps in Limits bound the cost.
_CHUNK = 3000


def int_from_digits(digits: str) -> int:
    """int(digits) for a string of decimal digits of any length."""
    if len(digits) <= _CHUNK:
        return int(digits)
    k = len(digits) // 2
    return int_from_digits(digits[:-k]) * 10**k + int_from_digits(digits[-k:])


def int_to_digits(n: int) -> str:
    """str(n) for an int of any size."""
    if n < 0:
        return "-" + int_to_digits(-n)
    if n.bit_length() <= _CHUNK * 3:  # fewer than about 2,700 digits
        return str(n)
    k = (n.bit_length() * 3) // 20  # about half the number of digits
    hi, lo = divmod(n, 10**k)
    return int_to_digits(hi) + int_to_digits(lo).rjust(k, "0")
_NEG_INF_WORDS = {"-inf", "-infinity"}


def parse_number(text: str, limits: Limits = DEFAULT_LIMITS) -> Fraction:
    """Read ``text`` as an exact rational number.

    >>> parse_number("0.1")
    Fraction(1, 10)
    >>> parse_number("-3/4")
    Fraction(-3, 4)
    >>> parse_number("1.5e-3")
    Fraction(3, 2000)
    """
    if not isinstance(text, str):
        raise NumberError(f"expected the text of a number, got {type(text).__name__}")
    # (keyed by the two limits read, not by the Limits object: a frozen
    # dataclass's hash is a Python function, a third of a cached read's time)
    if len(text) <= _CACHED_CHARS:
        return _parse_short(text, limits.max_number_chars, limits.max_exponent)
    return _parse(text, limits.max_number_chars, limits.max_exponent)


#: texts of at most this many characters are read through a cache (a model
#: repeats its numbers: a network's bounds and coefficients, 44,000 numbers of
#: a few hundred distinct texts on the 3,000-row one); a Fraction is immutable,
#: so the same one can be handed out again, and an error is not cached
_CACHED_CHARS = 32


def _parse(text: str, max_chars: int, max_exponent: int) -> Fraction:
    s = text.strip()
    if len(s) > max_chars:
        raise NumberError(
            f"number has {len(s)} characters, more than the limit of {max_chars}"
        )
    low = s.lower()
    if low in _INF_WORDS or low in _NEG_INF_WORDS:
        raise NumberError(f"'{s}' is not allowed here: infinity is only allowed as a bound")
    if low.lstrip("+-") == "nan":
        raise NumberError(f"'{s}' is not a number")
    m = _NUMBER.fullmatch(s)
    if m is None or (m.group("num") is None and not (m.group("int") or m.group("frac"))):
        plain = s.replace("_", "")  # digits grouped as in code: 1_000_000
        hint = f" (did you mean '{plain}'?)" if plain != s and _NUMBER.fullmatch(plain) and plain[-1:].isdigit() else ""
        raise NumberError(f"'{s}' is not a number{hint}")
    sign = -1 if m.group("sign") == "-" else 1
    if m.group("num") is not None:
        den = int_from_digits(m.group("den"))
        if den == 0:
            raise NumberError(f"'{s}' divides by zero")
        return Fraction(sign * int_from_digits(m.group("num")), den)
    int_part = m.group("int") or ""
    frac_part = m.group("frac") or ""
    exp = int(m.group("exp")) if m.group("exp") is not None else 0
    if abs(exp) > max_exponent:
        raise NumberError(
            f"'{s}' has exponent {exp}, beyond the limit of ±{max_exponent}"
        )
    # digits * 10**(exp - len(frac)) is the exact value of the decimal text.
    mantissa = int_from_digits(int_part + frac_part or "0")
    shift = exp - len(frac_part)
    if shift >= 0:
        return Fraction(sign * mantissa * 10**shift)
    return Fraction(sign * mantissa, 10**-shift)


_parse_short = lru_cache(maxsize=4096)(_parse)


def parse_bound(text: str, limits: Limits = DEFAULT_LIMITS) -> Fraction | None | str:
    """Read a bound: a number, or ``'+inf'``/``'-inf'`` for an infinite one.

    Returns the Fraction, or the string ``"+inf"`` or ``"-inf"``.
    """
    s = text.strip().lower()
    if s in _INF_WORDS:
        return "+inf"
    if s in _NEG_INF_WORDS:
        return "-inf"
    if s.lstrip("+-") == ".inf":  # YAML's spelling of infinity
        raise NumberError(f"'{text.strip()}' is not a number (did you mean '{s.replace('.', '')}'?)")
    if s in ("", "~", "null"):
        raise NumberError(f"'{text.strip()}' is not a number (leave the key out for no bound)")
    return parse_number(text, limits)


def to_fraction(value: object, what: str = "value") -> Fraction:
    """Convert a value given in code to a Fraction, refusing floats.

    Accepts int, Fraction, exact text (``"0.1"``, ``"3/4"``) and objects with
    integer ``numerator``/``denominator`` (such as gmpy2's mpq).
    """
    if isinstance(value, bool):
        raise NumberError(f"{what}: {value!r} is a bool, not a number")
    if isinstance(value, Fraction):
        return value
    if isinstance(value, int):
        return Fraction(value)
    if isinstance(value, float):
        raise NumberError(
            f"{what}: the float {value!r} is not exact; pass it as text "
            f"('{value!r}') or as a Fraction to say exactly which number is meant"
        )
    if isinstance(value, str):
        return parse_number(value)
    num = getattr(value, "numerator", None)
    den = getattr(value, "denominator", None)
    if num is not None and den is not None:
        try:
            return Fraction(int(num), int(den))
        except (TypeError, ValueError):
            pass
    raise NumberError(f"{what}: {value!r} ({type(value).__name__}) is not an exact number")


def format_number(value: Fraction | int) -> str:
    """The one written spelling of an exact number: ``'3'``, ``'-3/4'``."""
    if isinstance(value, int):
        return int_to_digits(value)
    if value.denominator == 1:
        return int_to_digits(value.numerator)
    return f"{int_to_digits(value.numerator)}/{int_to_digits(value.denominator)}"


def format_decimal(value: Fraction, digits: int = 12) -> str:
    """A decimal *rendering* of ``value`` to ``digits`` significant digits.

    Computed exactly from the rational (round half to even on the exact
    value), so the rendering does not depend on binary floating point.
    It is for reading only; the exact value is the :func:`format_number` one.
    """
    if value == 0:
        return "0"
    sign = "-" if value < 0 else ""
    v = abs(Fraction(value))
    # find e with 10**e <= v < 10**(e+1)
    e = len(int_to_digits(v.numerator)) - len(int_to_digits(v.denominator))
    if Fraction(10) ** e > v:
        e -= 1
    elif Fraction(10) ** (e + 1) <= v:
        e += 1
    scale = digits - 1 - e
    scaled = v * Fraction(10) ** scale
    q = round(scaled)  # Fraction.__round__ rounds half to even, exactly
    if q >= 10**digits:  # rounding carried into a new digit
        q //= 10
        scale -= 1
        e += 1
    s = int_to_digits(q)
    if -5 <= e < digits:
        if scale <= 0:
            out = s + "0" * (-scale)
        else:
            s = s.rjust(scale + 1, "0")
            out = s[:-scale] + "." + s[-scale:]
            out = out.rstrip("0").rstrip(".")
    else:
        mant = s[0] + ("." + s[1:].rstrip("0") if s[1:].rstrip("0") else "")
        out = f"{mant}e{e:+d}"
    return sign + out

"""A safe parser for linear expressions and constraint formulas.

Hand-written tokenizer and recursive-descent parser; nothing is evaluated
as code.  The grammar::

    formula  := expr ( cmp expr ){1,2}
    cmp      := "<=" | ">=" | "==" | "="
    expr     := sign* term ( ("+" | "-") sign* term )*
    term     := coef ["*"] NAME | NAME | coef
    coef     := NUMBER ( "*" NUMBER )*           (a product of numbers: 0.35 * 12 x)
    NAME     := [A-Za-z_][A-Za-z0-9_.]*
    NUMBER   := see exactlp.numbers (``3``, ``0.25``, ``5/2``, ``1.5e-3``)

Repeated names add up; terms whose coefficients cancel vanish.  In a chained
formula ``a <= expr <= b`` both outer parts must be numbers and both
comparisons must point the same way.

Errors are :class:`ExpressionError` carrying ``offset``, the 0-based
position of the problem inside the text, for the caller to turn into a
file column.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from fractions import Fraction
from typing import NamedTuple

from .errors import ExpressionError
from .limits import DEFAULT_LIMITS, Limits
from .numbers import parse_number

NAME_RE = re.compile(r"[A-Za-z_][A-Za-z0-9_.]*")

#: one token and the white space before it.  Every match is a token: the last
#: alternative takes any other character, and the text is scanned with its
#: trailing white space cut, so every run of white space is followed by a
#: character some alternative takes, and the scan is linear (no run of ``\s*``
#: is ever given back and tried again).
_TOKEN = re.compile(
    r"""
    \s*(?:
    (?P<number>[0-9]+/[0-9]+|(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?)
  | (?P<name>[A-Za-z_][A-Za-z0-9_.]*)
  | (?P<op><=|>=|==|=|<|>|\+|-|\*|/|\(|\)|,)
  | (?P<bad>\S))
    """,
    re.VERBOSE,
)
_TOKENS = _TOKEN.finditer


class Token(NamedTuple):
    """One token (a tuple: a model's formulas make hundreds of thousands)."""

    kind: str  # "number", "name", "op", "end"
    text: str
    offset: int


_new_tuple = tuple.__new__
_ONE = Fraction(1)
_MINUS_ONE = Fraction(-1)


FUNCTIONS = ("abs", "max", "min")


@dataclass(frozen=True)
class Call:
    """A weighted ``abs(e)``, ``max(e1, ...)`` or ``min(e1, ...)`` inside an expression."""

    coefficient: Fraction
    function: str
    args: tuple["Linear", ...]
    offset: int
    text: str  # as written, for messages and reports


@dataclass(frozen=True)
class Linear:
    """A linear expression: ordered terms (name -> coefficient) plus a constant.

    ``calls`` holds any abs()/max()/min() terms; they are linear only after the
    reformulation in :mod:`exactlp.reform`.
    """

    terms: tuple[tuple[str, Fraction], ...]
    constant: Fraction
    calls: tuple[Call, ...] = ()

    def as_dict(self) -> dict[str, Fraction]:
        return dict(self.terms)


@dataclass(frozen=True)
class Comparison:
    """A constraint formula reduced to ``lower <= terms (+ calls) <= upper``.

    ``None`` stands for an infinite side.
    """

    terms: tuple[tuple[str, Fraction], ...]
    lower: Fraction | None
    upper: Fraction | None
    calls: tuple[Call, ...] = ()


def _error(msg: str, offset: int) -> ExpressionError:
    err = ExpressionError(msg)
    err.offset = offset  # type: ignore[attr-defined]
    return err


def tokenize(text: str, limits: Limits = DEFAULT_LIMITS) -> list[Token]:
    if len(text) > limits.max_expression_chars:
        raise _error(
            f"expression has {len(text)} characters, more than the limit of "
            f"{limits.max_expression_chars}",
            0,
        )
    # one pass of the pattern over the text; the tokens are made as tuples
    # directly (a NamedTuple's own constructor is a Python function: a model of
    # 3,000 formulas makes about 140,000 tokens)
    tokens: list[Token] = []
    add = tokens.append
    for m in _TOKENS(text.rstrip()):
        kind = m.lastgroup
        if kind == "bad":  # the first character no token takes
            raise _error(f"unexpected character {m.group(kind)!r}", m.start(kind))
        add(_new_tuple(Token, (kind, m.group(kind), m.start(kind))))
    n = len(text)
    tokens.append(Token("end", "", n))
    return tokens


class _Parser:
    def __init__(self, text: str, limits: Limits) -> None:
        self.text = text
        self.limits = limits
        self.tokens = tokenize(text, limits)
        self.i = 0
        self.tok = self.tokens[0]  # the current token, tokens[i] (kept by advance)

    def advance(self) -> Token:
        t = self.tok
        self.i += 1
        self.tok = self.tokens[self.i] if self.i < len(self.tokens) else t
        return t

    def number(self, tok: Token) -> Fraction:
        try:
            return parse_number(tok.text, self.limits)
        except ExpressionError:
            raise
        except Exception as exc:  # NumberError: keep its message, add the place
            raise _error(getattr(exc, "message", str(exc)), tok.offset) from None

    def call(self, coef: Fraction, name_tok: Token, calls: list, nested: bool) -> None:
        """Parse ``abs(e)``, ``max(e, ...)`` or ``min(e, ...)`` after its name."""
        if nested:
            raise _error(f"{name_tok.text}() cannot stand inside another abs(), max() or min()", name_tok.offset)
        self.advance()  # the "("
        args = []
        while True:
            arg = self.expr(nested=True)
            args.append(arg)
            if self.tok.kind == "op" and self.tok.text == ",":
                self.advance()
                continue
            if self.tok.kind == "op" and self.tok.text == ")":
                end = self.advance().offset + 1
                break
            raise self.expected(f"',' or ')' to close {name_tok.text}(")
        if name_tok.text == "abs" and len(args) != 1:
            raise _error("abs() takes exactly one expression", name_tok.offset)
        if name_tok.text in ("max", "min") and len(args) < 1:
            raise _error(f"{name_tok.text}() needs at least one expression", name_tok.offset)
        calls.append(Call(coef, name_tok.text, tuple(args), name_tok.offset, self.text[name_tok.offset:end]))

    def expr(self, nested: bool = False) -> Linear:
        terms: dict[str, Fraction] = {}
        constant = Fraction(0)
        calls: list[Call] = []
        first = True
        while True:
            sign = 1
            if not first:
                if self.tok.kind == "op" and self.tok.text in "+-":
                    pass
                else:
                    break
            saw_sign = False
            while self.tok.kind == "op" and self.tok.text in ("+", "-"):
                if self.advance().text == "-":
                    sign = -sign
                saw_sign = True
            tok = self.tok
            if tok.kind == "number":
                self.advance()
                coef = self.number(tok)
                if sign < 0:
                    coef = -coef
                star = False
                while self.tok.kind == "op" and self.tok.text == "*":
                    at = self.advance().offset
                    star = True
                    if self.tok.kind == "op" and self.tok.text == "*":
                        raise self._power(at)
                    if self.tok.kind == "number":
                        coef *= self.number(self.advance())
                        star = False
                if self.tok.kind == "name" and self.tok.text in FUNCTIONS and self._next_is_paren():
                    self.call(coef, self.advance(), calls, nested)
                elif self.tok.kind == "name":
                    name_tok = self.advance()
                    if self.tok.kind == "op" and self.tok.text == "*":
                        raise self._after_name(name_tok)
                    name = name_tok.text
                    terms[name] = terms[name] + coef if name in terms else coef
                elif star:
                    raise self.expected("a variable name after '*'")
                else:
                    constant += coef
            elif tok.kind == "name" and tok.text in FUNCTIONS and self._next_is_paren():
                self.call(Fraction(sign), self.advance(), calls, nested)
            elif tok.kind == "name":
                self.advance()
                if self.tok.kind == "op" and self.tok.text == "*":
                    raise self._after_name(tok)
                name = tok.text
                unit = _ONE if sign > 0 else _MINUS_ONE
                terms[name] = terms[name] + unit if name in terms else unit
            else:
                if first and not saw_sign and tok.kind == "end":
                    raise _error("empty expression", tok.offset)
                raise self.expected("a number or a variable name")
            first = False
            if self.tok.kind in ("number", "name"):
                raise self.expected("'+', '-' or a comparison")
        # drop terms that cancelled; keep first-appearance order
        kept = tuple((k, v) for k, v in terms.items() if v)  # (a Fraction is true unless 0)
        return Linear(kept, constant, tuple(c for c in calls if c.coefficient))

    def _after_name(self, name_tok: Token) -> ExpressionError:
        """The error for ``name *`` (``self.tok`` is the ``*``): a linear term is
        a number times one variable, with the number written first."""
        star = self.tok
        nxt = self.tokens[self.i + 1]
        if nxt.kind == "op" and nxt.text == "*":
            return self._power(star.offset)
        if nxt.kind == "name" and nxt.text in FUNCTIONS and self.tokens[self.i + 2].text == "(":
            return _error(
                f"'{name_tok.text} * {nxt.text}(...)' multiplies a variable by an expression; "
                f"a linear expression allows only a number times a variable",
                star.offset,
            )
        if nxt.kind == "name":
            return _error(
                f"'{name_tok.text} * {nxt.text}' multiplies two variables; a linear "
                f"expression allows only a number times a variable",
                star.offset,
            )
        if nxt.kind == "number" or (nxt.kind == "op" and nxt.text in ("+", "-")):
            return _error(
                f"write the number before the name: '<number> {name_tok.text}', "
                f"not '{name_tok.text} * <number>'",
                star.offset,
            )
        self.advance()
        return self.expected("a number after '*'")

    @staticmethod
    def _power(offset: int) -> ExpressionError:
        return _error("'**' raises to a power, which is not linear", offset)

    def _next_is_paren(self) -> bool:
        nxt = self.tokens[self.i + 1]
        return nxt.kind == "op" and nxt.text == "("

    def expected(self, what: str) -> ExpressionError:
        tok = self.tok
        if tok.kind == "end":
            return _error(f"expected {what} at the end", tok.offset)
        if tok.text == "/":
            return _error("write fractions as p/q with no spaces, for example 3/4", tok.offset)
        if tok.text in ("<", ">"):
            return _error(
                f"strict comparison '{tok.text}' is not allowed in a linear program; use "
                f"'{tok.text}='",
                tok.offset,
            )
        if tok.text in ("(", ")", ","):
            return _error(f"unexpected '{tok.text}': parentheses are not part of a linear expression here", tok.offset)
        return _error(f"expected {what}, found {tok.text!r}", tok.offset)


def parse_expression(text: str, limits: Limits = DEFAULT_LIMITS) -> Linear:
    """Parse a linear expression such as ``3 north + 2 south - 1000``."""
    p = _Parser(text, limits)
    e = p.expr()
    if p.tok.kind != "end":
        if p.tok.kind == "op" and p.tok.text in ("<=", ">=", "==", "="):
            raise _error("a comparison is not allowed in an objective", p.tok.offset)
        raise p.expected("'+' or '-'")
    return e


_CMP = ("<=", ">=", "==", "=")


def parse_comparison(text: str, limits: Limits = DEFAULT_LIMITS) -> Comparison:
    """Parse a constraint formula into ``lower <= terms <= upper``.

    ``north - 2 south == transfer`` becomes ``north - 2 south - transfer``
    between 0 and 0; ``10 <= east + transfer <= 90`` a ranged row.
    """
    p = _Parser(text, limits)
    parts: list[tuple[Linear, int]] = []
    ops: list[Token] = []
    while True:
        start = p.tok.offset
        parts.append((p.expr(), start))
        if p.tok.kind == "end":
            break
        if p.tok.kind == "op" and p.tok.text in _CMP:
            ops.append(p.advance())
            continue
        raise p.expected("'+', '-' or a comparison (<=, >=, ==)")
    if not ops:
        raise _error("a constraint needs a comparison: <=, >= or ==", len(text))
    if len(ops) > 2:
        raise _error("at most two comparisons may be chained", ops[2].offset)
    if len(ops) == 1:
        (lhs, _), (rhs, _) = parts
        # lhs op rhs  <=>  (lhs - rhs) op 0  <=>  terms op (rhs.c - lhs.c)
        if rhs.terms:
            terms: dict[str, Fraction] = dict(lhs.terms)
            for k, v in rhs.terms:
                terms[k] = terms[k] - v if k in terms else -v
            kept = tuple((k, v) for k, v in terms.items() if v)
        else:  # (the usual 'terms <= number': lhs.terms are nonzero already)
            kept = lhs.terms
        bound = rhs.constant - lhs.constant
        calls = lhs.calls + tuple(Call(-c.coefficient, c.function, c.args, c.offset, c.text) for c in rhs.calls)
        op = ops[0].text
        if op == "<=":
            return Comparison(kept, None, bound, calls)
        if op == ">=":
            return Comparison(kept, bound, None, calls)
        return Comparison(kept, bound, bound, calls)
    (a, a_off), (mid, _), (b, b_off) = parts
    for side in (a, mid, b):
        if side.calls:
            raise _error("abs(), max() and min() cannot stand in a chained comparison: "
                         "write each side as its own constraint", side.calls[0].offset)
    for side, off in ((a, a_off), (b, b_off)):
        if len(side.terms) == 1 and side.terms[0][0].lower() in ("inf", "infinity") and not side.constant:
            raise _error(f"'{side.terms[0][0]}' cannot stand in a formula: leave out the side with no limit", off)
        if side.terms:
            raise _error(
                "in a chained comparison the outer parts must be numbers "
                "(write 'number <= expression <= number')",
                off,
            )
    o1, o2 = ops[0].text, ops[1].text
    if o1 != o2 or o1 not in ("<=", ">="):
        raise _error(
            "a chained comparison must be 'a <= expression <= b' or 'a >= expression >= b'",
            ops[1].offset,
        )
    lo, hi = (a.constant, b.constant) if o1 == "<=" else (b.constant, a.constant)
    return Comparison(mid.terms, lo - mid.constant, hi - mid.constant)

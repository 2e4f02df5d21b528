"""The computational form of a model, in gmpy2 ``mpq`` numbers.

Every constraint row ``L_i <= a_i x <= U_i`` gets one logical column
``s_i`` so that the rows become equalities::

    a_i x - s_i = 0,      L_i <= s_i <= U_i,      l_j <= x_j <= u_j

Columns ``0..n-1`` are the structural variables in declaration order and
``n..n+m-1`` the logicals in constraint order.  Every column carries its
own bounds (``None`` for an infinite side), so free, fixed, negative and
upper-bounded variables and ranged rows need no splitting and no extra rows.
Costs are for *minimisation*: a maximised objective is negated here, and
every value reported back is turned into the model's own sense.
"""

from __future__ import annotations

import sys
from dataclasses import dataclass
from fractions import Fraction

from gmpy2 import mpq

from ..model import Model, Sense

ZERO = mpq(0)
ONE = mpq(1)


def q(f: Fraction | int) -> mpq:
    if isinstance(f, int):
        return mpq(f)
    return mpq(f.numerator, f.denominator)


_from_coprime = getattr(Fraction, "_from_coprime_ints", None)  # Python 3.12 and later
_ZERO_FRACTION = Fraction(0)  # immutable, so one object serves every zero
# Python 3.11's Fraction keeps its two integers in these slots and has no
# no-normalise constructor of its own but the keyword below, which still walks
# the general constructor (0.7 us against 0.3 us here); the slots are filled
# directly, as 3.12's ``_from_coprime_ints`` does, only where they are exactly these.
_SLOTS = getattr(Fraction, "__slots__", None) == ("_numerator", "_denominator")
_new = object.__new__
# the constructor's ``_normalize=False`` keyword exists up to Python 3.11 only;
# where neither route above exists and it is gone too, the normalising constructor
_KEYWORD = sys.version_info < (3, 12)


def frac(v) -> Fraction:
    """An ``mpq`` as a Fraction, without a second gcd.

    An ``mpq`` is always in lowest terms with a positive denominator, which is
    exactly the form a Fraction keeps, so the pair is taken as it is (see
    :func:`coprime_fraction`).  Tests compare the result with the normalising
    constructor.
    """
    if not v:
        return _ZERO_FRACTION  # the commonest value (nonbasic at 0, slack rows' duals)
    return coprime_fraction(int(v.numerator), int(v.denominator))


def coprime_fraction(n: int, d: int) -> Fraction:
    """The Fraction ``n / d`` for integers already in lowest terms with ``d > 0``,
    without the gcd that the constructor would pay: through
    ``_from_coprime_ints`` from Python 3.12; on 3.11 by filling the two slots,
    or the constructor's ``_normalize=False`` path.  The caller proves
    ``gcd(n, d) = 1``; tests compare with the normalising constructor."""
    if not n:
        return _ZERO_FRACTION
    if _from_coprime is not None:
        return _from_coprime(n, d)
    if _SLOTS:
        f = _new(Fraction)
        f._numerator = n
        f._denominator = d
        return f
    if _KEYWORD:
        return Fraction(n, d, _normalize=False)
    return Fraction(n, d)


@dataclass
class Form:
    n: int  # structural columns
    m: int  # rows
    #: sparse columns: list of (row, value) for every column (structural, then logical)
    cols: list[list[tuple[int, mpq]]]
    lower: list[mpq | None]
    upper: list[mpq | None]
    cost: list[mpq]  # minimisation costs; logicals cost 0
    labels: list[str]
    kinds: list[str]  # "variable" | "slack"
    sign: int  # +1 if the model minimises, -1 if it maximises
    constant: mpq  # the objective constant, in the model's sense
    #: the first variable, then constraint, whose own bounds cross (lower > upper), as (kind, name)
    crossed: tuple[str, str] | None = None

    @property
    def ncols(self) -> int:
        return len(self.cols)


def build_form(model: Model) -> Form:
    n, m = len(model.variables), len(model.constraints)
    index = {v.name: j for j, v in enumerate(model.variables)}
    cols: list[list[tuple[int, mpq]]] = [[] for _ in range(n)]
    # Each distinct value becomes one shared mpq (immutable, so sharing is safe).
    # Real models repeat a few values thousands of times (SHIP04L: 8 distinct
    # among 6,332 coefficients), and looking a value up by its (numerator,
    # denominator) pair costs a third of building a new mpq, which needs a gcd
    # and two allocations.  A whole number is keyed by itself.
    cache: dict = {}
    get = cache.get

    def num(f: Fraction) -> mpq:
        p, r = f.numerator, f.denominator
        key = p if r == 1 else (p, r)
        v = get(key)
        if v is None:
            v = cache[key] = mpq(p, r)
        return v

    for i, c in enumerate(model.constraints):
        for name, a in c.terms:
            # num(a), inlined: this loop runs once per nonzero
            p, r = a.numerator, a.denominator
            key = p if r == 1 else (p, r)
            v = get(key)
            if v is None:
                v = cache[key] = mpq(p, r)
            cols[index[name]].append((i, v))
    sign = 1 if model.sense is Sense.MINIMIZE else -1
    cost = [ZERO] * n
    for name, c in model.objective:
        cost[index[name]] = num(c) * sign
    lower = [None if v.lower is None else num(v.lower) for v in model.variables]
    upper = [None if v.upper is None else num(v.upper) for v in model.variables]
    crossed = None
    for j, (lo, hi) in enumerate(zip(lower, upper)):
        if lo is not None and hi is not None and lo > hi:
            crossed = ("variable", model.variables[j].name)
            break
    labels = [v.name for v in model.variables]
    kinds = ["variable"] * n
    minus_one = -ONE
    for i, c in enumerate(model.constraints):
        cols.append([(i, minus_one)])
        lower.append(None if c.lower is None else num(c.lower))
        upper.append(None if c.upper is None else num(c.upper))
        cost.append(ZERO)
        labels.append(c.name)
        kinds.append("slack")
    if crossed is None:
        for i in range(m):
            lo, hi = lower[n + i], upper[n + i]
            if lo is not None and hi is not None and lo > hi:
                crossed = ("constraint", model.constraints[i].name)
                break
    return Form(n, m, cols, lower, upper, cost, labels, kinds, sign, q(model.objective_constant), crossed)

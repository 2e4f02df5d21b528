"""Exact reformulation of abs(), max() and min() into a linear program.

Allowed uses are exactly the convex ones (in the minimising sense):

* ``k abs(e)`` and ``k max(e1, ...)`` with ``k > 0``: an epigraph variable ``t``
  with rows ``t >= e`` and ``t >= -e`` (abs) or ``t >= e_i`` (max), and ``k t``
  in its place.  Minimising ``k t`` drives ``t`` down onto the function, so at
  every optimum ``t = abs(e)`` (or ``max``) exactly.
* ``k min(e1, ...)`` with ``k < 0``: a variable ``t`` with rows ``t <= e_i``.

In a maximised objective the signs flip (``min()`` with a positive weight,
``abs()``/``max()`` with a negative one).  In a constraint the function must sit
on the side the inequality bounds from above, after moving everything to the form
``... <= bound`` (so ``abs(e) <= b``, ``max(...) <= b``, ``min(...) >= b``).
Every other use is refused: it describes a set or an objective that is not
convex, which no linear program can state.

Auxiliary variables are named ``CONTEXT.FUNCTIONn`` (``CONTEXT`` the constraint's
name, or ``objective``) and their rows ``CONTEXT.FUNCTIONn.pos``/``.neg`` (abs)
or ``CONTEXT.FUNCTIONn.1``, ``.2``... (max, min): visible and stable.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from .errors import ExpressionError
from .expr import Call, Linear
from .model import Constraint, Variable


@dataclass(frozen=True)
class Auxiliary:
    """An auxiliary variable and the function it stands for."""

    name: str
    function: str
    args: tuple[Linear, ...]
    text: str  # the call as written
    context: str  # the constraint's name, or "objective"


def _error(msg: str, call: Call) -> ExpressionError:
    err = ExpressionError(msg)
    err.offset = call.offset  # type: ignore[attr-defined]
    return err


WHY = {
    "abs": "abs() can only be kept small: minimised, or bounded above ('abs(e) <= b'); "
           "asking it to be large describes two separate regions, which is not a linear program",
    "max": "max() can only be kept small: minimised, or bounded above ('max(...) <= b'); "
           "pushing a maximum up is not a linear program",
    "min": "min() can only be kept large: maximised, or bounded below ('min(...) >= b'); "
           "pushing a minimum down is not a linear program",
}


def convex(call: Call, weight: Fraction) -> bool:
    """Is ``weight * call`` convex (so that it may be minimised or bounded above)?"""
    w = weight * call.coefficient
    return (call.function in ("abs", "max") and w > 0) or (call.function == "min" and w < 0)


class Expander:
    """Collects auxiliary variables and rows while a model is read."""

    def __init__(self, taken: set[str]) -> None:
        self.taken = set(taken)
        self.variables: list[Variable] = []
        self.rows: list[Constraint] = []
        self.auxiliary: list[Auxiliary] = []
        self.counts: dict[tuple[str, str], int] = {}

    def _name(self, context: str, function: str, call: Call) -> str:
        k = self.counts.get((context, function), 0) + 1
        self.counts[(context, function)] = k
        name = f"{context}.{function}{k}"
        if name in self.taken:
            raise _error(f"the auxiliary name '{name}' is already used in the model; rename that item", call)
        self.taken.add(name)
        return name

    def replace(self, call: Call, context: str) -> tuple[str, Fraction]:
        """Add ``call``'s auxiliary variable and rows; return the term that replaces it."""
        t = self._name(context, call.function, call)
        note = f"auxiliary: {call.text} in {context}"
        rows = []
        if call.function == "abs":
            (e,) = call.args
            # t - e >= e0 and t + e >= -e0, with e = e_terms + e0
            rows.append(Constraint(f"{t}.pos", _combine(t, e.terms, -1), e.constant, None, note))
            rows.append(Constraint(f"{t}.neg", _combine(t, e.terms, 1), -e.constant, None, note))
            var = Variable(t, Fraction(0), None, None, note)
        else:
            for i, e in enumerate(call.args, 1):
                if call.function == "max":  # t >= e_i
                    rows.append(Constraint(f"{t}.{i}", _combine(t, e.terms, -1), e.constant, None, note))
                else:  # t <= e_i
                    rows.append(Constraint(f"{t}.{i}", _combine(t, e.terms, -1), None, e.constant, note))
            var = Variable(t, None, None, None, note)
        for r in rows:
            if r.name in self.taken:
                raise _error(f"the auxiliary name '{r.name}' is already used in the model; rename that item", call)
            self.taken.add(r.name)
        self.variables.append(var)
        self.rows.extend(rows)
        self.auxiliary.append(Auxiliary(t, call.function, call.args, call.text, context))
        return t, call.coefficient


def _combine(t: str, terms, sign: int):
    """The terms of ``t + sign * e`` (repeated names add up; zeros vanish)."""
    acc: dict[str, Fraction] = {t: Fraction(1)}
    for n, a in terms:
        acc[n] = acc.get(n, Fraction(0)) + sign * a
    return tuple((n, a) for n, a in acc.items() if a != 0)


def evaluate(aux: Auxiliary, values) -> Fraction:
    """The function's exact value at a point (for reports in the user's terms)."""
    vals = [e.constant + sum((a * values[n] for n, a in e.terms), Fraction(0)) for e in aux.args]
    if aux.function == "abs":
        return abs(vals[0])
    return max(vals) if aux.function == "max" else min(vals)

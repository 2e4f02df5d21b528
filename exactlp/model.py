"""The model: an immutable linear program with exact coefficients.

A model is::

    maximize | minimize   sum_j c_j x_j + c0
    subject to            L_i <= sum_j a_ij x_j <= U_i     (one per constraint)
                          l_j <= x_j <= u_j                (one per variable)

Bounds are Fractions, or ``None`` for an infinite side (``L_i``/``l_j``
``None`` means minus infinity, ``U_i``/``u_j`` ``None`` plus infinity).
Variables and constraints keep the order they were declared in; that order
is part of the model (it fixes the column order the solver and Bland's rule
use, and so the audit log).

The fingerprint is the SHA-256 of the canonical text (:meth:`Model.canonical`),
which depends on names, order and exact values only: not on whitespace,
comments, quoting, the spelling of numbers (``0.5`` and ``1/2`` are the
same), the order of terms inside one row, or descriptive text (model name,
description, units, notes).
"""

from __future__ import annotations

import enum
import hashlib
import json
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Iterable, Mapping

from .errors import ModelError, did_you_mean
from .numbers import format_number, to_fraction

CANONICAL_FORMAT = "exactlp-model/1"


class Sense(enum.Enum):
    MINIMIZE = "minimize"
    MAXIMIZE = "maximize"


@dataclass(frozen=True)
class Variable:
    name: str
    lower: Fraction | None = Fraction(0)
    upper: Fraction | None = None
    unit: str | None = None
    note: str | None = None


@dataclass(frozen=True)
class Constraint:
    name: str
    #: (variable name, nonzero coefficient), in variable declaration order
    terms: tuple[tuple[str, Fraction], ...]
    lower: Fraction | None = None
    upper: Fraction | None = None
    note: str | None = None

    @property
    def is_equality(self) -> bool:
        return self.lower is not None and self.lower == self.upper


@dataclass(frozen=True)
class Stage:
    """One tier of a priority model: its own objective, solved in order."""

    name: str
    sense: Sense
    objective: tuple[tuple[str, Fraction], ...]
    constant: Fraction = Fraction(0)
    written: str | None = None


@dataclass(frozen=True)
class Model:
    sense: Sense
    #: (variable name, nonzero coefficient), in variable declaration order
    objective: tuple[tuple[str, Fraction], ...]
    variables: tuple[Variable, ...]
    constraints: tuple[Constraint, ...] = ()
    objective_constant: Fraction = Fraction(0)
    name: str | None = None
    description: str | None = None
    source: str | None = field(default=None, compare=False)
    #: abs()/max()/min() reformulated: the auxiliary variables (exactlp.reform.Auxiliary)
    auxiliary: tuple = field(default=(), compare=False)
    #: constraint name -> the formula as written, for rows that held abs()/max()/min()
    written: tuple[tuple[str, str], ...] = field(default=(), compare=False)
    #: the objective as written, when it held abs()/max()/min()
    written_objective: str | None = field(default=None, compare=False)
    #: priority tiers (``objectives:``), in order; empty for a single objective.
    #: The model's own sense and objective are then those of the last stage.
    stages: tuple[Stage, ...] = ()

    def auxiliary_names(self) -> set[str]:
        """Names of the auxiliary variables and of the rows that define them."""
        out = set()
        for a in self.auxiliary:
            out.add(a.name)
        for c in self.constraints:
            if c.note and c.note.startswith("auxiliary: "):
                out.add(c.name)
        return out

    # -- lookups -------------------------------------------------------
    def variable_names(self) -> list[str]:
        return [v.name for v in self.variables]

    def constraint_names(self) -> list[str]:
        return [c.name for c in self.constraints]

    def variable(self, name: str) -> Variable:
        # by a map made on the first lookup and kept (as the fingerprint is): a
        # report check looks up every ranged variable, and a scan for each was
        # quadratic (6,428 lookups took a second on a generated 1,000-row network)
        index = self.__dict__.get("_variable_index")
        if index is None:
            index = {}
            for v in self.variables:
                index.setdefault(v.name, v)  # (the first of a name, as the scan found)
            object.__setattr__(self, "_variable_index", index)
        v = index.get(name)
        if v is not None:
            return v
        raise ModelError(f"no variable '{name}'{did_you_mean(name, self.variable_names())}")

    @property
    def nonzeros(self) -> int:
        return sum(len(c.terms) for c in self.constraints)

    # -- canonical form and fingerprint -------------------------------
    def canonical(self) -> str:
        """The canonical text of the model's mathematics (one JSON line)."""

        def b(x: Fraction | None) -> str | None:
            return None if x is None else format_number(x)

        doc = {
            "format": CANONICAL_FORMAT,
            "sense": self.sense.value,
            "objective": {
                "constant": format_number(self.objective_constant),
                "terms": [[n, format_number(c)] for n, c in self.objective],
            },
            "variables": [[v.name, b(v.lower), b(v.upper)] for v in self.variables],
            "constraints": [
                [c.name, [[n, format_number(a)] for n, a in c.terms], b(c.lower), b(c.upper)]
                for c in self.constraints
            ],
        }
        if self.stages:
            doc["stages"] = [[st.name, st.sense.value, [[n, format_number(c)] for n, c in st.objective],
                              format_number(st.constant)] for st in self.stages]
        return json.dumps(doc, separators=(",", ":"), ensure_ascii=True, sort_keys=True)

    @property
    def fingerprint(self) -> str:
        cached = self.__dict__.get("_fingerprint")
        if cached is None:
            digest = hashlib.sha256(self.canonical().encode("ascii")).hexdigest()
            cached = "sha256:" + digest
            object.__setattr__(self, "_fingerprint", cached)
        return cached

    def objective_value(self, values: Mapping[str, Fraction]) -> Fraction:
        return self.objective_constant + sum(
            (c * values[n] for n, c in self.objective), Fraction(0)
        )


def stage_model(model: Model, k: int, held: list[Fraction]) -> Model:
    """The linear program of stage ``k`` (0-based) of a priority model.

    Stage ``k`` optimises its own objective subject to every constraint, with
    the objective of each earlier stage ``j`` held exactly at ``held[j]`` (its
    certified optimum, constant included) by an equality row ``NAME.held``.
    """
    from dataclasses import replace

    st = model.stages[k]
    rows = list(model.constraints)
    for j in range(k):
        prev = model.stages[j]
        value = held[j] - prev.constant
        rows.append(Constraint(f"{prev.name}.held", prev.objective, value, value,
                               note=f"stage '{prev.name}' held at its proven optimum"))
    return replace(model, sense=st.sense, objective=st.objective, objective_constant=st.constant,
                   constraints=tuple(rows), stages=(), written_objective=st.written)


# ----------------------------------------------------------------------
# building models in code
# ----------------------------------------------------------------------

def _bound(value: object, what: str, side: str) -> Fraction | None:
    if value is None:
        return None
    if isinstance(value, str) and value.strip().lower() in ("inf", "+inf", "-inf", "infinity", "-infinity", "+infinity"):
        neg = value.strip().startswith("-")
        if side == "lower" and not neg or side == "upper" and neg:
            raise ModelError(f"{what}: {side} bound {value!r} is infinite on the wrong side")
        return None
    return to_fraction(value, what)


def _order_terms(
    terms: Mapping[str, object] | Iterable[tuple[str, object]],
    order: Mapping[str, int],
    what: str,
) -> tuple[tuple[str, Fraction], ...]:
    items = terms.items() if isinstance(terms, Mapping) else terms
    acc: dict[str, Fraction] = {}
    for name, coef in items:
        if name not in order:
            raise ModelError(
                f"{what}: undeclared variable '{name}'{did_you_mean(name, order)}"
            )
        acc[name] = acc.get(name, Fraction(0)) + to_fraction(coef, f"{what}.{name}")
    return tuple(
        (n, c) for n, c in sorted(acc.items(), key=lambda kv: order[kv[0]]) if c != 0
    )


def build_model(
    *,
    variables: Mapping[str, object] | Iterable[object],
    objective: Mapping[str, object] | None = None,
    sense: Sense | str = Sense.MINIMIZE,
    constraints: Mapping[str, object] | None = None,
    objective_constant: object = 0,
    name: str | None = None,
    description: str | None = None,
) -> Model:
    """Build a model from Python values.

    ``variables`` maps names to ``(lower, upper)`` pairs, to dicts with keys
    ``lower``/``upper``/``unit``/``note``, or to ``None`` for ``[0, inf)``;
    ``constraints`` maps names to ``(terms, lower, upper)`` triples.  Numbers
    may be int, Fraction or exact text; floats are refused.
    """
    if isinstance(sense, str):
        try:
            sense = Sense(sense)
        except ValueError:
            raise ModelError(f"sense must be 'minimize' or 'maximize', not {sense!r}") from None
    vars_: list[Variable] = []
    items = variables.items() if isinstance(variables, Mapping) else [(v.name, v) for v in variables]  # type: ignore[union-attr]
    for vname, spec in items:
        if isinstance(spec, Variable):
            vars_.append(spec)
            continue
        what = f"variables.{vname}"
        unit = note = None
        if spec is None:
            lo, hi = Fraction(0), None
        elif isinstance(spec, Mapping):
            lo = _bound(spec.get("lower", 0), what, "lower")
            hi = _bound(spec.get("upper"), what, "upper")
            unit, note = spec.get("unit"), spec.get("note")
        else:
            lo_raw, hi_raw = spec  # type: ignore[misc]
            lo, hi = _bound(lo_raw, what, "lower"), _bound(hi_raw, what, "upper")
        vars_.append(Variable(str(vname), lo, hi, unit, note))
    order = {v.name: i for i, v in enumerate(vars_)}
    if len(order) != len(vars_):
        raise ModelError("variables: a name is declared twice")
    cons: list[Constraint] = []
    for cname, spec in (constraints or {}).items():
        if isinstance(spec, Constraint):
            cons.append(spec)
            continue
        terms, lo, hi = spec  # type: ignore[misc]
        what = f"constraints.{cname}"
        cons.append(
            Constraint(
                str(cname),
                _order_terms(terms, order, what),
                _bound(lo, what, "lower"),
                _bound(hi, what, "upper"),
            )
        )
    return Model(
        sense=sense,
        objective=_order_terms(objective or {}, order, "objective"),
        variables=tuple(vars_),
        constraints=tuple(cons),
        objective_constant=to_fraction(objective_constant, "objective constant"),
        name=name,
        description=description,
    )

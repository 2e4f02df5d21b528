"""Reports of post-optimal work, in which every claim cites the certificate that proves it.

Written with ``-o`` by ``exactlp conflict`` and ``exactlp ranges``; checked by
``exactlp verify MODEL REPORT`` (:mod:`exactlp.report_check`).  Plain sorted
YAML (or JSON); exact numbers are strings.
"""

from __future__ import annotations

from fractions import Fraction

from . import __version__
from .certificate import NOTICE, build_certificate
from .model import Model
from .numbers import format_number

REPORT_FORMAT = "exactlp-report/1"


def _head(model: Model, kind: str) -> dict:
    return {"format": REPORT_FORMAT, "report": kind, "tool": f"exactlp {__version__}",
            "model": {"name": model.name, "fingerprint": model.fingerprint}, "notice": NOTICE}


def _point(p: dict) -> dict:
    return {k: format_number(v) for k, v in p.items()}


def conflict_report(model: Model, c) -> dict:
    doc = _head(model, "conflict")
    doc["constraints"] = list(c.constraints)
    doc["bounds"] = list(c.bounds)
    # the subset (only these constraints, only these variables' bounds) is infeasible:
    doc["certificate"] = build_certificate(c.model, c.result)
    # and dropping any one member leaves a feasible set: a point for each
    doc["minimality"] = [
        {"drop": {"kind": kind, "name": name}, "point": _point(c.witnesses[(kind, name)])}
        for kind, names in (("constraint", c.constraints), ("bound", c.bounds)) for name in names
    ]
    return doc


def ranges_report(model: Model, rg) -> dict:
    doc = _head(model, "ranges")
    doc["objective"] = format_number(rg.result.objective)
    doc["certificate"] = build_certificate(model, rg.result)
    row = rg.fixed_model.constraints[-1]
    doc["fixed_objective"] = {"name": row.name, "value": format_number(row.lower)}
    doc["unique"] = rg.unique
    doc["proof"] = rg.proof
    out = {}
    for name, v in rg.ranges.items():
        entry = {"min": None if v.minimum is None else format_number(v.minimum),
                 "max": None if v.maximum is None else format_number(v.maximum), "method": v.method}
        if v.method == "solved":
            (pmin, rmin), (pmax, rmax) = rg.endpoints[name]
            entry["certificates"] = {"min": build_certificate(pmin, rmin), "max": build_certificate(pmax, rmax)}
        out[name] = entry
    doc["ranges"] = out
    return doc


# ----------------------------------------------------------------------
# sensitivity
# ----------------------------------------------------------------------

def with_coefficient(model: Model, name: str, value) -> Model:
    """The model with variable ``name``'s objective coefficient set to ``value``."""
    from dataclasses import replace

    order = {v.name: i for i, v in enumerate(model.variables)}
    terms = dict(model.objective)
    terms[name] = value
    return replace(model, objective=tuple(sorted(((n, c) for n, c in terms.items() if c), key=lambda t: order[t[0]])))


def only_variable(model: Model, name: str, direction: int) -> Model:
    """The model whose objective is ``direction * x_name`` alone (same sense)."""
    from dataclasses import replace

    return replace(model, objective=((name, Fraction(direction)),), objective_constant=Fraction(0))


def with_side(model: Model, name: str, which: str, value) -> Model:
    """The model with constraint ``name``'s ``which`` side (lower, upper, equals) set to ``value``."""
    from dataclasses import replace

    from .model import Constraint

    cons = []
    for c in model.constraints:
        if c.name == name:
            lo = value if which in ("lower", "equals") else c.lower
            hi = value if which in ("upper", "equals") else c.upper
            c = Constraint(c.name, c.terms, lo, hi, c.note)
        cons.append(c)
    return replace(model, constraints=tuple(cons))


def optimal_certificate(model: Model, primal: dict, duals: dict) -> dict:
    """A certificate of optimality of ``primal`` for ``model`` with multipliers ``duals``.

    Built without solving: activities, reduced costs and the dual objective are
    computed from the model; the verifier then decides whether it proves anything.
    """
    from .certificate import CERTIFICATE_FORMAT

    s = 1 if model.sense.value == "minimize" else -1
    y = {c.name: Fraction(duals.get(c.name, 0)) for c in model.constraints}
    cost = dict(model.objective)
    d = {v.name: Fraction(cost.get(v.name, 0)) for v in model.variables}
    act = {}
    for c in model.constraints:
        act[c.name] = sum((a * primal[n] for n, a in c.terms), Fraction(0))
        for n, a in c.terms:
            d[n] -= y[c.name] * a
    dual = model.objective_constant
    for val, lo, hi in ([(y[c.name], c.lower, c.upper) for c in model.constraints]
                        + [(d[v.name], v.lower, v.upper) for v in model.variables]):
        if val:
            side = lo if (val > 0) == (s > 0) else hi
            dual += val * (side if side is not None else 0)
    return {
        "format": CERTIFICATE_FORMAT, "tool": f"exactlp {__version__}",
        "model": {"name": model.name, "fingerprint": model.fingerprint},
        "sense": model.sense.value, "status": "optimal", "notice": NOTICE,
        "objective": format_number(model.objective_value(primal)),
        "primal": _point(primal), "activities": _point(act),
        "duals": _point(y), "reduced_costs": _point(d), "dual_objective": format_number(dual),
    }


def sensitivity_report(model: Model, sens) -> dict:
    doc = _head(model, "sensitivity")
    r = sens.result
    x = dict(r.primal)
    y = dict(r.duals)
    doc["objective"] = format_number(r.objective)
    doc["certificate"] = build_certificate(model, r)
    cost = dict(model.objective)
    obj = {}
    for name, iv in sens.objective_ranges.items():
        cj = cost.get(name, Fraction(0))
        dy = sens.dual_directions.get(name, {})
        proofs = {}
        for side, end, sign in (("lower", iv.lower, -1), ("upper", iv.upper, 1)):
            if end is None:  # x* is optimal for +-x_j alone: duals +-dy
                probe = only_variable(model, name, sign)
                proofs[side] = optimal_certificate(probe, x, {k: sign * v for k, v in dy.items()})
            else:
                t = end - cj
                probe = with_coefficient(model, name, end)
                proofs[side] = optimal_certificate(probe, x, {k: y[k] + t * dy.get(k, 0) for k in y})
        obj[name] = {"lower": None if iv.lower is None else format_number(iv.lower),
                     "upper": None if iv.upper is None else format_number(iv.upper), "certificates": proofs}
    doc["objective_ranges"] = obj
    rhs = {}
    for name, rr in sens.rhs_ranges.items():
        iv = rr.interval
        proofs = {}
        for side, end, sign in (("lower", iv.lower, -1), ("upper", iv.upper, 1)):
            if end is not None:
                t = end - rr.value
                moved = {k: x[k] + t * (rr.direction or {}).get(k, 0) for k in x}
                proofs[side] = optimal_certificate(with_side(model, name, rr.bound, end), moved, y)
            elif rr.direction is None:  # a slack row relaxed: its side removed
                proofs[side] = optimal_certificate(with_side(model, name, rr.bound, None), x, y)
            else:  # a binding row moving without limit: the allocation moves along a direction
                proofs[side] = {"direction": _point({k: sign * v for k, v in rr.direction.items()})}
        rhs[name] = {"bound": rr.bound, "value": format_number(rr.value), "dual": format_number(rr.dual),
                     "lower": None if iv.lower is None else format_number(iv.lower),
                     "upper": None if iv.upper is None else format_number(iv.upper), "certificates": proofs}
    doc["rhs_ranges"] = rhs
    return doc

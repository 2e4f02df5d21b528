"""Checking reports (conflict, ranges) from the model alone.

Like :mod:`exactlp.verifier`, on which it builds, this imports nothing from the
solver and works in ``fractions.Fraction``.  Each claim is re-derived:

conflict
    the named constraints and bounds (all other constraints dropped, all other
    variables' bounds freed) form a model whose infeasibility certificate is
    valid; and for each member, the given point satisfies all the others, so
    the set is minimal.
ranges
    the model's optimal certificate is valid and gives the objective ``z*``;
    the model plus the row ``objective == z*`` holds exactly the optimal set;
    a range found by solving is proven by the certificates of minimising and
    maximising that variable over it; a range decided by a nonzero reduced
    cost ``d_j`` follows from the zero-gap certificate (every optimum has
    ``d_j (x_j - bound_j) = 0``); a unique optimum decided without solves is
    proven when the equations every optimum must meet (``x_j`` at its bound where
    ``d_j != 0``, row ``i`` at its side where ``y_i != 0``, every equality row, and
    fixed variables) have exactly one solution.
"""

from __future__ import annotations

from dataclasses import replace
from fractions import Fraction

from .model import Constraint, Model, Sense
from .numbers import format_number as fmt, parse_number
from .verifier import Check, Verification, verify


class _Bad(Exception):
    pass


def _n(text, where):
    try:
        return parse_number(text) if isinstance(text, str) else None
    except Exception:
        raise _Bad(f"{where}: not an exact number: {text!r}") from None


def _feasible(model: Model, point: dict) -> str | None:
    x = {}
    for v in model.variables:
        if v.name not in point:
            return f"the point has no value for '{v.name}'"
        x[v.name] = _n(point[v.name], f"point.{v.name}")
        if (v.lower is not None and x[v.name] < v.lower) or (v.upper is not None and x[v.name] > v.upper):
            return f"'{v.name}' = {fmt(x[v.name])} breaks its bounds"
    for c in model.constraints:
        a = sum((k * x[n] for n, k in c.terms), Fraction(0))
        if (c.lower is not None and a < c.lower) or (c.upper is not None and a > c.upper):
            return f"constraint '{c.name}' fails at the point ({fmt(a)})"
    return None


def _subset(model: Model, rows: set, bounded: set) -> Model:
    return replace(model, constraints=tuple(c for c in model.constraints if c.name in rows),
                   variables=tuple(v if v.name in bounded else replace(v, lower=None, upper=None)
                                   for v in model.variables),
                   objective=(), objective_constant=Fraction(0), stages=())


def _cert(model: Model, cert, what: str, checks: list) -> Verification:
    v = verify(model, cert if isinstance(cert, dict) else {})
    if not v.valid:
        raise _Bad(f"{what}: {v.failure.detail}")
    checks.append(Check(what, True, f"certificate valid ({v.status})"))
    return v


def _conflict(model: Model, rep: dict, checks: list) -> str:
    rows, bounded = set(rep.get("constraints") or []), set(rep.get("bounds") or [])
    names = {c.name for c in model.constraints}
    vnames = {v.name for v in model.variables}
    if not rows <= names or not bounded <= vnames:
        raise _Bad("the report names constraints or variables the model does not have")
    sub = _subset(model, rows, bounded)
    if _cert(sub, rep.get("certificate"), "the conflict is infeasible", checks).status != "infeasible":
        raise _Bad("the conflict's certificate does not prove infeasibility")
    given = {(d.get("drop", {}).get("kind"), d.get("drop", {}).get("name")): d.get("point") or {}
             for d in rep.get("minimality") or [] if isinstance(d, dict)}
    for kind, group in (("constraint", rows), ("bound", bounded)):
        for name in sorted(group):
            if (kind, name) not in given:
                raise _Bad(f"minimality: no point shows that dropping {kind} '{name}' leaves a feasible set")
            one_out = _subset(model, rows - {name} if kind == "constraint" else rows,
                              bounded - {name} if kind == "bound" else bounded)
            problem = _feasible(one_out, given[(kind, name)])
            if problem:
                raise _Bad(f"minimality: dropping {kind} '{name}': {problem}")
    checks.append(Check("minimal", True, f"each of the {len(rows) + len(bounded)} members is needed"))
    return "a minimal conflict"


def _full_rank(rows: list[dict], names: list[str]) -> bool:
    """Do these linear equations (name -> coefficient) determine every variable?"""
    M = [[r.get(n, Fraction(0)) for n in names] for r in rows]
    rank, col = 0, 0
    for col in range(len(names)):
        p = next((i for i in range(rank, len(M)) if M[i][col] != 0), None)
        if p is None:
            return False
        M[rank], M[p] = M[p], M[rank]
        for i in range(len(M)):
            if i != rank and M[i][col] != 0:
                f = M[i][col] / M[rank][col]
                M[i] = [a - f * b for a, b in zip(M[i], M[rank])]
        rank += 1
    return rank == len(names)


def _ranges(model: Model, rep: dict, checks: list) -> str:
    cert = rep.get("certificate") or {}
    v = _cert(model, cert, "the optimum", checks)
    if v.status != "optimal":
        raise _Bad("the ranges report needs an optimal certificate")
    z = _n(cert.get("objective"), "certificate.objective")
    if _n(rep.get("objective"), "objective") != z:
        raise _Bad("objective: the report and its certificate differ")
    fo = rep.get("fixed_objective") or {}
    if _n(fo.get("value"), "fixed_objective.value") != z - model.objective_constant:
        raise _Bad("fixed_objective: the held value is not the certified optimum")
    fixed = replace(model, constraints=model.constraints + (Constraint(
        str(fo.get("name")), model.objective, z - model.objective_constant, z - model.objective_constant),))
    x = {k: _n(val, f"primal.{k}") for k, val in (cert.get("primal") or {}).items()}
    d = {k: _n(val, f"reduced_costs.{k}") for k, val in (cert.get("reduced_costs") or {}).items()}
    y = {k: _n(val, f"duals.{k}") for k, val in (cert.get("duals") or {}).items()}
    names = [vv.name for vv in model.variables]
    # the equations every optimal solution meets (complementary slackness with the certified duals)
    eqs = [{vv.name: Fraction(1)} for vv in model.variables
           if d.get(vv.name) or (vv.lower is not None and vv.lower == vv.upper)]
    eqs += [dict(c.terms) for c in model.constraints if y.get(c.name) or c.is_equality]
    determined = _full_rank(eqs, names)
    claimed = rep.get("ranges") or {}
    for name, entry in claimed.items():
        if name not in names or not isinstance(entry, dict):
            raise _Bad(f"ranges: '{name}' is not a variable of the model")
        lo, hi, how = _n(entry.get("min"), f"{name}.min"), _n(entry.get("max"), f"{name}.max"), entry.get("method")
        var = model.variable(name)
        if how == "solved":
            for side, value, sense in (("min", lo, "minimize"), ("max", hi, "maximize")):
                probe = replace(fixed, sense=Sense(sense), objective=((name, Fraction(1)),), objective_constant=Fraction(0))
                pc = (entry.get("certificates") or {}).get(side) or {}
                pv = _cert(probe, pc, f"{side} of {name}", checks)
                got = _n(pc.get("objective"), f"{name}.{side}") if pv.status == "optimal" else None
                if pv.status not in ("optimal", "unbounded") or got != value:
                    raise _Bad(f"ranges.{name}.{side}: the certificate gives {got}, the report {value}")
        elif how == "reduced cost":
            if not d.get(name) or lo != hi or lo != x.get(name) or x.get(name) not in (var.lower, var.upper):
                raise _Bad(f"ranges.{name}: not decided by a nonzero reduced cost at a bound")
        elif how == "fixed bounds":
            if not (var.lower is not None and var.lower == var.upper == lo == hi):
                raise _Bad(f"ranges.{name}: the variable is not fixed at {lo}")
        elif how == "unique optimum":
            if not determined or lo != hi or lo != x.get(name):
                raise _Bad(f"ranges.{name}: the optimum is not shown to be unique")
        else:
            raise _Bad(f"ranges.{name}: unknown method {how!r}")
    widths = [_n(e.get("min"), "min") != _n(e.get("max"), "max") for e in claimed.values()]
    unique = rep.get("unique")
    if unique is True or unique == "true":
        if not (determined or (set(claimed) == set(names) and not any(widths))):
            raise _Bad("unique: neither the duals nor the ranges prove the optimum unique")
    elif any(widths) is False and (unique is False or unique == "false") and set(claimed) == set(names):
        raise _Bad("unique: every range has zero width, so the optimum is unique")
    checks.append(Check("ranges", True, f"{len(claimed)} variables' ranges over the optimal set re-derived"))
    return "its ranges over the optimal set"


def _sensitivity(model: Model, rep: dict, checks: list) -> str:
    from .reports import only_variable, with_coefficient, with_side

    base = rep.get("certificate") or {}
    if _cert(model, base, "the optimum", checks).status != "optimal":
        raise _Bad("the sensitivity report needs an optimal certificate")
    x = {k: _n(v, f"primal.{k}") for k, v in (base.get("primal") or {}).items()}
    y = {k: _n(v, f"duals.{k}") for k, v in (base.get("duals") or {}).items()}
    z = _n(base.get("objective"), "objective")

    def same_point(cert, what):
        got = {k: _n(v, k) for k, v in (cert.get("primal") or {}).items()}
        if got != x:
            raise _Bad(f"{what}: the certificate is about another allocation")

    cost = dict(model.objective)
    for name, e in (rep.get("objective_ranges") or {}).items():
        if name not in {v.name for v in model.variables} or not isinstance(e, dict):
            raise _Bad(f"objective_ranges: '{name}' is not a variable of the model")
        lo, hi = _n(e.get("lower"), f"{name}.lower"), _n(e.get("upper"), f"{name}.upper")
        cj = cost.get(name, Fraction(0))
        if (lo is not None and lo > cj) or (hi is not None and hi < cj):
            raise _Bad(f"objective_ranges.{name}: the range does not contain the coefficient {fmt(cj)}")
        for side, end, sign in (("lower", lo, -1), ("upper", hi, 1)):
            cert = (e.get("certificates") or {}).get(side) or {}
            probe = with_coefficient(model, name, end) if end is not None else only_variable(model, name, sign)
            _cert(probe, cert, f"coefficient of {name} at {side} end", [])
            same_point(cert, f"objective_ranges.{name}.{side}")
    for name, e in (rep.get("rhs_ranges") or {}).items():
        con = next((c for c in model.constraints if c.name == name), None)
        if con is None or not isinstance(e, dict):
            raise _Bad(f"rhs_ranges: '{name}' is not a constraint of the model")
        which, value, dual = e.get("bound"), _n(e.get("value"), f"{name}.value"), _n(e.get("dual"), f"{name}.dual")
        if dual != y.get(name):
            raise _Bad(f"rhs_ranges.{name}: the dual differs from the certificate's")
        side_value = {"upper": con.upper, "lower": con.lower, "equals": con.lower}.get(which, "?")
        if side_value != value or (which == "equals" and not con.is_equality):
            raise _Bad(f"rhs_ranges.{name}: the model's {which} side is not {value}")
        for side, end, sign in (("lower", _n(e.get("lower"), "lower"), -1), ("upper", _n(e.get("upper"), "upper"), 1)):
            proof = (e.get("certificates") or {}).get(side) or {}
            if end is not None:
                probe = with_side(model, name, which, end)
                _cert(probe, proof, f"limit of {name} at {side} end", [])
                if _n(proof.get("objective"), "objective") != z + dual * (end - value):
                    raise _Bad(f"rhs_ranges.{name}.{side}: the optimum there is not z + dual * change")
                if _n((proof.get("duals") or {}).get(name), "dual") != dual:
                    raise _Bad(f"rhs_ranges.{name}.{side}: the dual changes within the range")
            elif "direction" in proof:
                w = {k: _n(v, f"direction.{k}") for k, v in (proof.get("direction") or {}).items()}
                for v in model.variables:
                    wv = w.get(v.name, 0)
                    if (wv > 0 and v.upper is not None) or (wv < 0 and v.lower is not None):
                        raise _Bad(f"rhs_ranges.{name}.{side}: the direction runs into a bound of '{v.name}'")
                for c in model.constraints:
                    a = sum((k * w.get(n, 0) for n, k in c.terms), Fraction(0))
                    if c.name == name:
                        if a != sign:
                            raise _Bad(f"rhs_ranges.{name}.{side}: the direction does not follow the limit")
                    elif (a > 0 and c.upper is not None) or (a < 0 and c.lower is not None):
                        raise _Bad(f"rhs_ranges.{name}.{side}: the direction leaves constraint '{c.name}'")
                if sum((k * w.get(n, 0) for n, k in model.objective), Fraction(0)) != sign * dual:
                    raise _Bad(f"rhs_ranges.{name}.{side}: the objective does not move at the dual's rate")
            else:
                _cert(with_side(model, name, which, None), proof, f"limit of {name} relaxed", [])
                same_point(proof, f"rhs_ranges.{name}.{side}")
    checks.append(Check("sensitivity", True, "every range end re-derived from its certificate"))
    return "its sensitivity ranges"


def check_report(model: Model, report: dict) -> Verification:
    checks: list = []
    kind = report.get("report")
    try:
        if report.get("format") != "exactlp-report/1":
            raise _Bad(f"format: expected 'exactlp-report/1', found {report.get('format')!r}")
        fp = (report.get("model") or {}).get("fingerprint") if isinstance(report.get("model"), dict) else None
        if fp != model.fingerprint:
            raise _Bad(f"fingerprint: the report is for {fp}, the model given is {model.fingerprint}")
        checks.append(Check("model fingerprint", True, model.fingerprint))
        if kind == "conflict":
            what = _conflict(model, report, checks)
        elif kind == "ranges":
            what = _ranges(model, report, checks)
        elif kind == "sensitivity":
            what = _sensitivity(model, report, checks)
        else:
            raise _Bad(f"report: unknown kind {kind!r}")
    except _Bad as exc:
        checks.append(Check("report", False, str(exc)))
        return Verification(False, None, tuple(checks))
    return Verification(True, what, tuple(checks))

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
    This is the construction by definition; the sensitivity report builds its many
    variants' certificates with :class:`_Around`, which must give exactly this.
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


class _Around:
    """Optimality certificates for variants of one model around one allocation.

    The sensitivity report needs one certificate per range end: the model with
    one objective coefficient, or one row's side, moved (or the objective replaced
    by one variable), with the allocation or the duals moved along a sparse
    direction.  :func:`optimal_certificate` recomputes every activity and reduced
    cost from the whole model; here what the variants share (the activities at
    the allocation, ``A^T y``, the dual objective's terms and the written strings)
    is computed once, and a variant recomputes only the entries it changes.  The
    arithmetic is the same exact arithmetic, so each certificate equals the one
    :func:`optimal_certificate` gives (``tests/test_analysis.py`` compares them).
    """

    def __init__(self, model: Model, primal: dict, duals: dict) -> None:
        self.model = model
        self.x = dict(primal)
        self.y = {c.name: Fraction(duals.get(c.name, 0)) for c in model.constraints}
        self.cost = dict(model.objective)
        self.rows = {c.name: c for c in model.constraints}
        self.vars = {v.name: v for v in model.variables}
        cols: dict = {v.name: [] for v in model.variables}
        self.act = {}
        for c in model.constraints:
            self.act[c.name] = sum((a * self.x[n] for n, a in c.terms), Fraction(0))
            for n, a in c.terms:
                cols[n].append((c.name, a))
        self.cols = cols
        # d = c - A^T y at the model's own costs and duals
        self.d = {n: Fraction(self.cost.get(n, 0)) - sum((self.y[r] * a for r, a in col), Fraction(0))
                  for n, col in cols.items()}
        self.s = 1 if model.sense.value == "minimize" else -1
        self.objective = model.objective_value(self.x)
        self.fx, self.fact, self.fy, self.fd = _point(self.x), _point(self.act), _point(self.y), _point(self.d)
        self.fzero_d = {n: "0" for n in self.d}
        self.fzero_y = {r: "0" for r in self.y}
        # the dual objective's terms, by ("row" | "var", name), and their sum
        self.terms = {("row", c.name): self._term(self.y[c.name], c.lower, c.upper) for c in model.constraints}
        self.terms.update({("var", v.name): self._term(self.d[v.name], v.lower, v.upper) for v in model.variables})
        self.total = sum(self.terms.values(), Fraction(0))

    def _term(self, val: Fraction, lo, hi) -> Fraction:
        """val times the side its sign selects (the same rule as optimal_certificate)."""
        if not val:
            return Fraction(0)
        side = lo if (val > 0) == (self.s > 0) else hi
        return val * (side if side is not None else 0)

    def _doc(self, probe: Model, objective, primal, act, y, d, dual) -> dict:
        # (each certificate gets its own dictionaries: a YAML writer would turn
        # one object met twice into an anchor and alias)
        from .certificate import CERTIFICATE_FORMAT

        return {
            "format": CERTIFICATE_FORMAT, "tool": f"exactlp {__version__}",
            "model": {"name": probe.name, "fingerprint": probe.fingerprint},
            "sense": probe.sense.value, "status": "optimal", "notice": NOTICE,
            "objective": format_number(objective), "primal": primal, "activities": act,
            "duals": y, "reduced_costs": d, "dual_objective": format_number(dual),
        }

    def with_coefficient(self, probe: Model, name: str, t: Fraction, dy: dict) -> dict:
        """``probe``: the model with c_name raised by t; the allocation as it is; duals y + t dy."""
        y, d = dict(self.fy), dict(self.fd)
        changed_d: dict = {name: self.d[name] + t}  # d_j = c_j - a_j^T y moves by t in c_name ...
        new_terms = {}
        for r, v in dy.items():  # ... and by -t a_j^T dy in every column of a row where dy is nonzero
            if not v:
                continue
            tv = t * v
            yr = self.y[r] + tv
            y[r] = format_number(yr)
            c = self.rows[r]
            new_terms[("row", r)] = self._term(yr, c.lower, c.upper)
            for n, a in c.terms:
                changed_d[n] = changed_d.get(n, self.d[n]) - tv * a
        for n, dn in changed_d.items():
            d[n] = format_number(dn)
            v = self.vars[n]
            new_terms[("var", n)] = self._term(dn, v.lower, v.upper)
        dual = probe.objective_constant + self.total + sum(
            (new - self.terms[k] for k, new in new_terms.items()), Fraction(0))
        objective = self.objective + t * self.x[name]
        return self._doc(probe, objective, dict(self.fx), dict(self.fact), y, d, dual)

    def alone(self, probe: Model, name: str, sign: int, dy: dict) -> dict:
        """``probe``: the objective ``sign x_name`` alone; the allocation as it is; duals sign dy."""
        y, d = dict(self.fzero_y), dict(self.fzero_d)
        dn_all: dict = {name: Fraction(sign)}
        dual = probe.objective_constant
        for r, v in dy.items():
            if not v:
                continue
            yr = sign * v
            y[r] = format_number(yr)
            c = self.rows[r]
            dual += self._term(yr, c.lower, c.upper)
            for n, a in c.terms:
                dn_all[n] = dn_all.get(n, Fraction(0)) - yr * a
        for n, dn in dn_all.items():
            d[n] = format_number(dn)
            v = self.vars[n]
            dual += self._term(dn, v.lower, v.upper)
        return self._doc(probe, probe.objective_value(self.x), dict(self.fx), dict(self.fact), y, d, dual)

    def with_side(self, probe: Model, row: str, dx: dict) -> dict:
        """``probe``: the model with one side of ``row`` moved; the allocation x + dx; duals y."""
        primal, act = dict(self.fx), dict(self.fact)
        moved_act: dict = {}
        objective = self.objective
        for n, v in dx.items():
            if not v:
                continue
            primal[n] = format_number(self.x[n] + v)
            objective += self.cost.get(n, 0) * v
            for r, a in self.cols[n]:
                moved_act[r] = moved_act.get(r, self.act[r]) + a * v
        for r, ar in moved_act.items():
            act[r] = format_number(ar)
        c = next(c for c in probe.constraints if c.name == row)
        dual = probe.objective_constant + self.total - self.terms[("row", row)] + self._term(self.y[row], c.lower, c.upper)
        return self._doc(probe, objective, primal, act, dict(self.fy), dict(self.fd), dual)


def sensitivity_report_size(model: Model) -> int:
    """The exact numbers a sensitivity report of ``model`` holds, at most: with
    ``k = 2 (n + m)`` range ends, a certificate of ``k + 2`` numbers (the allocation,
    activities, duals and reduced costs, and the two objectives) for each end and
    for the optimum, and the ``k`` ends, each limit's value and dual, and the
    objective themselves."""
    k = 2 * (len(model.variables) + len(model.constraints))
    return (k + 1) * (k + 3) + k


def check_report_size(model: Model, limits=None) -> None:
    """Refuse a sensitivity report that would pass ``limits.max_report_numbers``."""
    from .errors import LimitError
    from .limits import DEFAULT_LIMITS

    most = (limits or DEFAULT_LIMITS).max_report_numbers
    size = sensitivity_report_size(model)
    if size > most:
        n, m = len(model.variables), len(model.constraints)
        raise LimitError(f"a sensitivity report of this model ({n} variables, {m} constraints) would hold "
                         f"about {size:,} exact numbers, one certificate for each end of each range; the "
                         f"limit is {most:,} (print the ranges with --json instead)",
                         file=model.source, field="--output")


def sensitivity_report(model: Model, sens, limits=None) -> dict:
    check_report_size(model, limits)
    doc = _head(model, "sensitivity")
    r = sens.result
    x = dict(r.primal)
    y = dict(r.duals)
    doc["objective"] = format_number(r.objective)
    doc["certificate"] = build_certificate(model, r)
    around = _Around(model, x, y)
    cost = dict(model.objective)
    obj = {}
    for name, iv in sens.objective_ranges.items():
        cj = cost.get(name, Fraction(0))
        dy = sens.dual_directions.get(name, {})
        proofs = {}
        for side, end, sign in (("lower", iv.lower, -1), ("upper", iv.upper, 1)):
            if end is None:  # x* is optimal for +-x_j alone: duals +-dy
                proofs[side] = around.alone(only_variable(model, name, sign), name, sign, dy)
            else:  # the duals y + t dy, t = end - c_j
                proofs[side] = around.with_coefficient(with_coefficient(model, name, end), name, end - cj, dy)
        obj[name] = {"lower": None if iv.lower is None else format_number(iv.lower),
                     "upper": None if iv.upper is None else format_number(iv.upper), "certificates": proofs}
    doc["objective_ranges"] = obj
    rhs = {}
    for name, rr in sens.rhs_ranges.items():
        iv = rr.interval
        proofs = {}
        for side, end, sign in (("lower", iv.lower, -1), ("upper", iv.upper, 1)):
            if end is not None:  # the allocation x + t direction, t = end - value
                t = end - rr.value
                dx = {k: t * v for k, v in (rr.direction or {}).items()}
                proofs[side] = around.with_side(with_side(model, name, rr.bound, end), name, dx)
            elif rr.direction is None:  # a slack row relaxed: its side removed
                proofs[side] = around.with_side(with_side(model, name, rr.bound, None), name, {})
            else:  # a binding row moving without limit: the allocation moves along a direction
                proofs[side] = {"direction": _point({k: sign * v for k, v in rr.direction.items()})}
        rhs[name] = {"bound": rr.bound, "value": format_number(rr.value), "dual": format_number(rr.dual),
                     "lower": None if iv.lower is None else format_number(iv.lower),
                     "upper": None if iv.upper is None else format_number(iv.upper), "certificates": proofs}
    doc["rhs_ranges"] = rhs
    return doc

"""Helpers shared by the tests: references outside the project, and proof checks."""

from __future__ import annotations

import contextlib
from dataclasses import replace
from fractions import Fraction

import exactlp
from exactlp.certificate import CERTIFICATE_FORMAT, NOTICE
from exactlp.model import Constraint, Model, Sense
from exactlp.numbers import format_number
from exactlp.reports import _point


def to_linprog(model: Model):
    """The model as arguments of scipy.optimize.linprog (floats: the reference's own
    domain); its matrices sparse when dense ones would pass a million entries."""
    names = [v.name for v in model.variables]
    idx = {n: j for j, n in enumerate(names)}
    sgn = 1 if model.sense is Sense.MINIMIZE else -1
    c = [0.0] * len(names)
    for n, a in model.objective:
        c[idx[n]] = sgn * float(a)
    ub, b_ub, eq, b_eq = [], [], [], []  # rows as {column: value}
    for con in model.constraints:
        row = {idx[n]: float(a) for n, a in con.terms}
        if con.is_equality:
            eq.append(row)
            b_eq.append(float(con.lower))
            continue
        if con.upper is not None:
            ub.append(row)
            b_ub.append(float(con.upper))
        if con.lower is not None:
            ub.append({j: -a for j, a in row.items()})
            b_ub.append(-float(con.lower))
    sparse = len(names) * len(model.constraints) > 1_000_000

    def matrix(rows):
        if sparse:
            from scipy.sparse import csr_matrix

            data = [(i, j, a) for i, row in enumerate(rows) for j, a in row.items()]
            return csr_matrix(([a for _, _, a in data], ([i for i, _, _ in data], [j for _, j, _ in data])),
                              shape=(len(rows), len(names)))
        dense = [[0.0] * len(names) for _ in rows]
        for i, row in enumerate(rows):
            for j, a in row.items():
                dense[i][j] = a
        return dense
    bounds = [(None if v.lower is None else float(v.lower), None if v.upper is None else float(v.upper))
              for v in model.variables]
    kw = dict(c=c, bounds=bounds, method="highs")
    if ub:
        kw.update(A_ub=matrix(ub), b_ub=b_ub)
    if eq:
        kw.update(A_eq=matrix(eq), b_eq=b_eq)
    return kw, sgn


def scipy_solve(model: Model, with_point: bool = False):
    """(status, objective in the model's sense) from scipy's HiGHS; status as ours.

    With ``with_point``, also the point it returned (floats, or None).
    """
    from scipy.optimize import linprog

    kw, sgn = to_linprog(model)
    if not kw["c"]:
        kw["c"] = [0.0]
        kw["bounds"] = [(0, 0)]
    r = linprog(**kw)
    if r.status in (2, 3):
        # scipy 1.17.1's HiGHS presolve calls some unbounded models infeasible
        # (found by tests/test_differential.py, e.g. maximize x2 subject to
        # 0 <= x0 + x1 - x2 <= 1, x >= 0; and min -x0 with an all-zero row), and
        # some infeasible ones unbounded (found by the long differential run:
        # min -x0 with x2 free, -100000 x2 >= 1 and -x1 + x2 / 1000 >= 0, x1 >= 0,
        # where x0 meets no row).  With presolve off it answers correctly, so an
        # "infeasible" or "unbounded" is taken from the reference only when it
        # holds without presolve as well -- unless that run gives no definite
        # answer (status 4 on a model with an all-zero row 0 <= -1).
        again = linprog(**kw, options={"presolve": False})
        if again.status in (0, 2, 3):
            r = again
    status = {0: "optimal", 2: "infeasible", 3: "unbounded"}.get(r.status, f"scipy-status-{r.status}")
    obj = None
    if r.status == 0:
        obj = sgn * r.fun + float(model.objective_constant)
    if with_point:
        return status, obj, (list(r.x) if r.status == 0 and model.variables else None)
    return status, obj


def sympy_solve(model: Model):
    """Exact optimum from SymPy's small exact LP routines (sympy.solvers.simplex.lpmin/lpmax).

    The symbolic form is used: bounds become ordinary relations.  (SymPy 1.14's
    matrix ``linprog`` mis-handles some bound and equality-only shapes.)
    """
    from sympy import Eq, Rational, symbols
    from sympy.solvers.simplex import InfeasibleLPError, UnboundedLPError, lpmax, lpmin

    xs = symbols(f"v0:{len(model.variables)}") if model.variables else ()
    sym = {v.name: xs[j] for j, v in enumerate(model.variables)}
    R = lambda f: Rational(f.numerator, f.denominator)  # noqa: E731
    expr = lambda terms: sum((R(a) * sym[n] for n, a in terms), Rational(0))  # noqa: E731
    rels = []
    for v in model.variables:
        if v.lower is not None and v.lower == v.upper:
            rels.append(Eq(sym[v.name], R(v.lower)))
            continue
        if v.lower is not None:
            rels.append(sym[v.name] >= R(v.lower))
        if v.upper is not None:
            rels.append(sym[v.name] <= R(v.upper))
    for c in model.constraints:
        e = expr(c.terms)
        if not c.terms:  # a row with no terms: 0 must lie within its bounds
            if (c.lower is not None and c.lower > 0) or (c.upper is not None and c.upper < 0):
                return "infeasible", None
            continue
        if c.is_equality:
            rels.append(Eq(e, R(c.lower)))
            continue
        if c.lower is not None:
            rels.append(e >= R(c.lower))
        if c.upper is not None:
            rels.append(e <= R(c.upper))
    f = expr(model.objective) + xs[0] * 0 if xs else expr(model.objective)
    try:
        val, _ = (lpmin if model.sense is Sense.MINIMIZE else lpmax)(f, rels)
    except InfeasibleLPError:
        return "infeasible", None
    except UnboundedLPError:
        return "unbounded", None
    v = Fraction(int(val.p), int(val.q))
    return "optimal", v + model.objective_constant


def solve_verified(model: Model, **kw):
    """Solve, build the certificate, and assert the independent verifier accepts it."""
    import exactlp
    from exactlp.certificate import build_certificate, dump_certificate, parse_certificate_text

    r = exactlp.solve(model, **kw)
    if r.status.is_proven:
        cert = build_certificate(model, r)
        # through the file format and back, as a reviewer would receive it
        back = parse_certificate_text(dump_certificate(cert), "<cert>")
        v = exactlp.verify(model, back)
        assert v.valid, v.failure
    return r


def ray_holds(model: Model, ray: dict) -> bool:
    """Does ``ray`` prove unboundedness, checked in Fractions from the model alone?

    Used only to settle a disagreement with the float reference: scipy's HiGHS
    (1.17.1) calls some unbounded models optimal when a tiny cost meets large
    matrix entries (found by the differential run: minimize -1e-5 x3 with x2 free
    and x2 + 1000 x3 <= 0 -- x3 grows without limit along x2 = -1000 x3; and
    maximize x2 with 3 x2 - 100 x3 <= 0 and x0 / 1000 - 10000 x2 >= 0, along
    x0 = 10^9 / 3, x2 = 100 / 3, x3 = 1).  This recheck shares no code with
    exactlp's verifier.  (It was a float check with an absolute tolerance of
    1e-12 until the second model: its row ``x0 / 1000 - 10000 x2`` is exactly 0
    along the ray and came out about -6e-11 in floats.)
    """
    r = {k: Fraction(v) for k, v in ray.items()}
    for v in model.variables:
        rv = r.get(v.name, 0)
        if (rv > 0 and v.upper is not None) or (rv < 0 and v.lower is not None):
            return False
    for c in model.constraints:
        a = sum((k * r.get(n, 0) for n, k in c.terms), Fraction(0))
        if (a > 0 and c.upper is not None) or (a < 0 and c.lower is not None):
            return False
    slope = sum((k * r.get(n, 0) for n, k in model.objective), Fraction(0))
    return (slope < 0) if model.sense is Sense.MINIMIZE else (slope > 0)


def _weighed_sides(model: Model, y: dict, g: dict) -> Fraction | None:
    """The weak-duality sum shared by :func:`farkas_holds` and
    :func:`optimum_holds`: each row weighed by its multiplier ``y`` on its lower
    side when positive, its upper when negative (``y_i a_i`` taken from the
    running column weights ``g``), then each variable by what is left in ``g``
    on its lower bound when positive, its upper when negative; None when a side
    used is infinite."""
    total = Fraction(0)
    for c in model.constraints:
        w = y.get(c.name, 0)
        if w:
            side = c.lower if w > 0 else c.upper
            if side is None:
                return None
            total += w * side
            for n, k in c.terms:
                g[n] -= w * k
    for v in model.variables:
        left = g[v.name]
        if left:
            bound = v.lower if left > 0 else v.upper
            if bound is None:
                return None
            total += left * bound
    return total


def farkas_holds(model: Model, rows: dict) -> bool:
    """Do the row multipliers ``rows`` prove the model infeasible, checked in
    Fractions from the model alone (no code shared with exactlp's verifier)?

    Each row ``l <= a x <= u`` is weighed by its multiplier ``y`` (a positive
    one on its lower side, a negative one on its upper), each variable by
    ``mu_j = -(A^T y)_j`` on its bounds the same way, so the weighted rows and
    bounds add up to ``0 >= r``; the proof holds when every side used is
    finite and ``r > 0``.
    """
    r = _weighed_sides(model, {k: Fraction(v) for k, v in rows.items()},
                       {v.name: Fraction(0) for v in model.variables})
    return r is not None and r > 0


def optimum_holds(model: Model, result) -> bool:
    """Is ``result``'s optimum proven by its own point and duals, checked in
    Fractions from the model alone (no code shared with exactlp's verifier)?

    Weak duality, written for ``min c x`` (a maximum is the minimum of ``-c``,
    its duals negated): a row's dual ``y_i`` weighs its lower side when
    positive, its upper side when negative; each variable's reduced cost
    ``c_j - (A^T y)_j`` weighs its lower bound when positive, its upper when
    negative; every side used must be finite, and the weighted sum is then a
    lower bound on every feasible ``c x``.  The point must be exactly feasible
    and reach that bound, and the stated objective must be its value.
    """
    sgn = 1 if model.sense is Sense.MINIMIZE else -1
    x = {v.name: Fraction(result.primal[v.name]) for v in model.variables}
    if exact_violation(model, [x[v.name] for v in model.variables]) != 0:
        return False
    value = sum((k * x[n] for n, k in model.objective), Fraction(0))
    if result.objective != value + model.objective_constant:
        return False
    g = {v.name: Fraction(0) for v in model.variables}
    for n, k in model.objective:
        g[n] += sgn * k
    bound = _weighed_sides(model, {k: sgn * Fraction(v) for k, v in result.duals.items()}, g)
    return bound is not None and bound == sgn * value


def reference_failure(model: Model, ours, ref_status: str, ref_obj, ref_x) -> str | None:
    """Why the float reference's answer is wrong where it differs from ours, or
    None when nothing here explains the difference (the caller then fails).

    Each explanation is checked in Fractions from the model alone, beside the
    verifier's acceptance of our certificate (``solve_verified``):
    ``"missed ray"``: we proved unbounded, the reference says optimal, and our
    ray holds (:func:`ray_holds`); ``"infeasible point"``: the reference's
    "optimal" point breaks a bound or row (:func:`exact_violation`), where we
    proved infeasible or found a worse optimum; ``"suboptimal point"``: both
    optimal, ours strictly better than the reference's by more than its 1e-6
    relative tolerance, and our point exactly feasible, so the reference stopped
    short (found by the differential run: minimize -x4 / 10 with x4 <= 1, x2
    free, x2 + 1000 x4 <= 0 and 0 <= -x1 - 1000 x2 + x4 <= 1; the optimum is
    x4 = 1, x2 = -1000, x1 = 10^6, where HiGHS returned x4 = 1e-6); ``"missed
    infeasibility"``: the reference says unbounded, with and without its
    presolve (:func:`scipy_solve`), and our Farkas multipliers hold
    (:func:`farkas_holds`; found by the differential run: min -x0 - x1 with x2
    fixed at 1 and 10000 x1 + x2 / 1000 <= 0, x1 >= 0, three times; its
    presolve says infeasible, and without presolve it says unbounded); ``"missed
    feasible point"``: the reference says infeasible, with and without its
    presolve, and our point is exactly feasible (found by the differential
    run: min -x1 with x0 >= 1 and 100000 x0 - x1 / 100000 <= 0, which
    x0 = 1, x1 = 10^10 meets); ``"missed optimum"``: the reference says
    infeasible or unbounded, and our point and duals prove the optimum
    (:func:`optimum_holds`; found by the differential run: min -x6 with x2
    free, 0 <= -1000 x2 + x6 <= 1, x6 <= x1 and -x0 - 200000 x1 - x2 <= 0
    beside 100000 x0 + x1 / 100 + x2 <= 0, which the reference calls
    unbounded); ``"no answer"``: the reference gave no definite
    status.
    """
    if ref_status.startswith("scipy-status-"):
        return "no answer"  # (status 4, numerical difficulties: seen on entries of 1e4 and 1e-4 together)
    ours_status = ours.status.value
    if ours_status == "unbounded" and ref_status == "optimal" and ray_holds(model, ours.ray):
        return "missed ray"
    if ours_status == "infeasible" and ref_status == "optimal" and exact_violation(model, ref_x) > 0:
        return "infeasible point"
    if ours_status == "infeasible" and ref_status == "unbounded" and ours.crossed is None \
            and farkas_holds(model, ours.farkas_rows):
        return "missed infeasibility"
    if ours_status == "optimal" and ref_status in ("infeasible", "unbounded") and optimum_holds(model, ours):
        return "missed optimum"
    if ours_status in ("optimal", "unbounded") and ref_status == "infeasible" \
            and exact_violation(model, [ours.primal[v.name] for v in model.variables]) == 0:
        return "missed feasible point"
    if ours_status == ref_status == "optimal" and ref_obj is not None:
        gap = float(ours.objective) - ref_obj
        if abs(gap) > 1e-6 * max(1.0, abs(ref_obj)):
            better = gap < 0 if model.sense is Sense.MINIMIZE else gap > 0
            point = [ours.primal[v.name] for v in model.variables]
            if better and exact_violation(model, point) == 0:
                return "suboptimal point"
            if not better and exact_violation(model, ref_x) > 0:
                return "infeasible point"
    return None


def exact_violation(model: Model, point) -> Fraction:
    """How far a float point breaks the model's bounds and rows, computed exactly.

    Settles a reference "optimal" against our verified Farkas certificate or a
    better optimum of ours: scipy's
    HiGHS accepts points within its feasibility tolerance (1e-7), so it can call an
    infeasible model optimal (found by the differential run: min -x1 with x1 >= 0,
    x2 <= 0, 10000 x1 - x2 <= 0 and x1 + 1000 x2 <= -1, where the first row forces
    x1 = x2 = 0 and the second then says 0 <= -1; HiGHS returns x1 = -1e-7).  Each
    float is taken as the exact rational it is.
    """
    x = {v.name: Fraction(val) for v, val in zip(model.variables, point)}
    worst = Fraction(0)
    for v in model.variables:
        if v.lower is not None:
            worst = max(worst, v.lower - x[v.name])
        if v.upper is not None:
            worst = max(worst, x[v.name] - v.upper)
    for c in model.constraints:
        a = sum((k * x[n] for n, k in c.terms), Fraction(0))
        if c.lower is not None:
            worst = max(worst, c.lower - a)
        if c.upper is not None:
            worst = max(worst, a - c.upper)
    return worst


def always_scaled(monkeypatch) -> None:
    """Every basis solve scaled by the numerator of det B, whatever the sizes
    (the rules of exactlp.solver.basis would skip some); exactness must not change."""
    import exactlp.solver.basis as basis_module

    monkeypatch.setattr(basis_module, "SCALE_BITS", 0)
    monkeypatch.setattr(basis_module, "SCALE_MIN_SEEN", 0)
    monkeypatch.setattr(basis_module, "SCALE_RATIO", 10**9)
    monkeypatch.setattr(basis_module, "SCALE_SPREAD", 0)
    monkeypatch.setattr(basis_module, "SCALE_MAX_BITS", 10**9)


def never_scaled(monkeypatch) -> None:
    """No basis solve scaled."""
    import exactlp.solver.basis as basis_module

    monkeypatch.setattr(basis_module, "SCALE_BITS", 10**9)


def fraction_route(path: str, monkeypatch) -> None:
    """Make the solver's Fractions without a gcd by one route (form.frac and
    form.coprime_fraction): "as installed" (whichever this Python offers),
    "slots" (filled directly) or "constructor" (the keyword that skips
    normalising up to 3.11, the plain constructor after it); skips the test
    where "slots" does not exist."""
    import pytest

    from exactlp.solver import form

    if path != "as installed":
        monkeypatch.setattr(form, "_from_coprime", None)
        if path == "slots" and not form._SLOTS:
            pytest.skip("this Python's Fraction does not keep (_numerator, _denominator) slots")
        monkeypatch.setattr(form, "_SLOTS", path == "slots")


@contextlib.contextmanager
def calls_recorded(owner, name: str, what=lambda got: got is not None):
    """Replace ``owner.name`` (a function) for the block by one that calls it and
    records ``what`` of each call's result (by default whether it is something
    other than None); yields the list."""
    original = getattr(owner, name)
    seen: list = []

    def recording(*args):
        got = original(*args)
        seen.append(what(got))
        return got
    setattr(owner, name, recording)
    try:
        yield seen
    finally:
        setattr(owner, name, original)


def network_text(sources: int, districts: int, reach: int | None = None) -> str:
    """The generated water network of cases/generated at another size, as its own
    script writes it (``reach``: the script's default when None)."""
    import importlib.util

    from .conftest import CASES

    spec = importlib.util.spec_from_file_location("make_network", CASES / "generated" / "make_network.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod.build(sources, districts) if reach is None else mod.build(sources, districts, reach)


def network(sources: int, districts: int, reach: int | None = None) -> Model:
    """:func:`network_text`, read."""
    from exactlp.io import model_from_text

    return model_from_text(network_text(sources, districts, reach))


def leaf_paths(doc, path=()):
    """The path (keys and list positions) to every leaf of a document of
    dictionaries and lists, depth first, in order."""
    if isinstance(doc, dict):
        for k, v in doc.items():
            yield from leaf_paths(v, path + (k,))
    elif isinstance(doc, list):
        for i, v in enumerate(doc):
            yield from leaf_paths(v, path + (i,))
    else:
        yield path


def left_in_cycles(make, check=lambda got: None) -> int:
    """How many objects a second call of ``make()`` leaves to the cyclic
    collector (the first call is not counted: what it imports or caches).
    ``check`` is called with the second call's result before it is dropped."""
    import gc

    make()
    gc.collect()
    was = gc.isenabled()
    gc.disable()
    try:
        got = make()
        check(got)
        del got
        return gc.collect()
    finally:
        if was:
            gc.enable()


def refused(read, *args, **kw) -> str:
    """The one line with which ``read(*args, **kw)`` refuses its input (an
    InputError's text: file, line, column, field and message); fails the test
    if it reads the input instead."""
    import pytest

    from exactlp.errors import InputError

    with pytest.raises(InputError) as exc:
        read(*args, **kw)
    return str(exc.value)


# -- the definitions behind the reports' claims: each claim as a model of its own
#    and a whole certificate for it, which the verifier decides (the report check
#    must agree with those verdicts)

def with_coefficient(model: Model, name: str, value) -> Model:
    """The model with variable ``name``'s objective coefficient set to ``value``."""
    order = {v.name: i for i, v in enumerate(model.variables)}
    terms = dict(model.objective)
    terms[name] = value
    return replace(model, objective=tuple(sorted(((n, c) for n, c in terms.items() if c), key=lambda t: order[t[0]])))


def only_variable(model: Model, name: str, direction: int) -> Model:
    """The model whose objective is ``direction * x_name`` alone (same sense)."""
    return replace(model, objective=((name, Fraction(direction)),), objective_constant=Fraction(0))


def with_side(model: Model, name: str, which: str, value) -> Model:
    """The model with constraint ``name``'s ``which`` side (lower, upper, equals) set to ``value``."""
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
    (Built for each end of each sensitivity and ranges claim: the verifier's
    verdicts on them are what the report check must agree with.)
    """
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
        "format": CERTIFICATE_FORMAT, "tool": f"exactlp {exactlp.__version__}",
        "model": {"name": model.name, "fingerprint": model.fingerprint},
        "sense": model.sense.value, "status": "optimal", "notice": NOTICE,
        "objective": format_number(model.objective_value(primal)),
        "primal": _point(primal), "activities": _point(act),
        "duals": _point(y), "reduced_costs": _point(d), "dual_objective": format_number(dual),
    }

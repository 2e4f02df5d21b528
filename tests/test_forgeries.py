"""Consistent forgeries: certificates whose every stated number agrees with their own
vectors (the activities are ``A x``, the reduced costs ``c - A^T y``, the Farkas
bounds ``-A^T y`` and its right-hand side, the ray's ``A r`` and ``c^T r``), but
whose claim is false.

The single-number mutations of test_certificates.py are refused at the first number
the verifier recomputes; these get past every recomputed number and reach the
checks behind them: the sides a multiplier or a reduced cost rests on, the zero
gap, the Farkas contradiction and the sides it uses, a crossed pair of bounds, the
ray's direction, and the priority tiers.  Each must be refused with its exact
message.  The verdicts follow from weak duality and Farkas' lemma (common practice,
no one source); every number below is worked by hand in the comment beside it, and
the forged certificates are built here with ``fractions.Fraction`` alone.  The last
table does the same for the ends of a ranges report (their moved entries, duals
and rays), which the report check re-proves one condition at a time.
"""

import copy
import dataclasses
from fractions import Fraction as F

import pytest

import exactlp
from exactlp.io import model_from_text
from exactlp.numbers import format_number
from exactlp.verifier import FORMAT, verify

from .conftest import CASES

# minimise 2a + 3b over a + b >= 5, a - b <= 1, 0 <= a, 0 <= b <= 4: the optimum is
# 12 at (3, 2), proven by y = (5/2, -1/2) (c - A^T y = (2 - 5/2 + 1/2, 3 - 5/2 - 1/2)
# = 0, and 5 * 5/2 + 1 * (-1/2) = 12)
MIN_ROWS = ("minimize: 2 a + 3 b\nvariables: {a: {}, b: {upper: 4}}\n"
            "constraints:\n  need: a + b >= 5\n  cap: a - b <= 1\n")
# maximise a + b over a + 2b <= 6, b free above -2, a >= 0
MAX_ROWS = "maximize: a + b\nvariables: {a: {}, b: {lower: -2}}\nconstraints:\n  share: a + 2 b <= 6\n"
# feasible only just: x + y >= 5 with x <= 3 and y <= 2 holds at (3, 2)
TIGHT = "minimize: x + y\nvariables: {x: {upper: 3}, y: {upper: 2}}\nconstraints:\n  need: x + y >= 5\n"
# y has no upper bound and z none below
OPEN = ("minimize: x\nvariables: {x: {upper: 3}, y: {}, z: {lower: -inf, upper: 1}, e: {fixed: 2}}\n"
        "constraints:\n  need: x + y >= 5\n  cap: x + z <= 1\n")
# maximise x - z - w: x is held by 'link' through y <= 3, z by 'floor', w by nothing
# but its cost (so no ray improves it)
RAYS = ("maximize: x - z - w\nvariables: {x: {}, y: {upper: 3}, z: {lower: -inf, upper: 0}, w: {}}\n"
        "constraints:\n  link: x - y <= 2\n  floor: y + z >= -1\n")


def fr(values: dict) -> dict:
    return {k: F(v) for k, v in values.items()}


def txt(values: dict) -> dict:
    return {k: format_number(F(v)) for k, v in values.items()}


def head(m, status: str) -> dict:
    return {"format": FORMAT, "model": {"name": m.name, "fingerprint": m.fingerprint},
            "sense": m.sense.value, "status": status}


def times(m, x: dict) -> dict:
    """``A x`` by row."""
    return {c.name: sum((a * x.get(n, 0) for n, a in c.terms), F(0)) for c in m.constraints}


def transposed(m, y: dict) -> dict:
    """``A^T y`` by variable."""
    g = {v.name: F(0) for v in m.variables}
    for c in m.constraints:
        for n, a in c.terms:
            g[n] += a * y.get(c.name, 0)
    return g


def dense(m, x: dict) -> dict:
    """Every variable's value, zero where ``x`` leaves it out."""
    return {v.name: F(x.get(v.name, 0)) for v in m.variables}


def optimal(m, x, y, dual_objective="0") -> dict:
    """An optimal claim with activities, objective and reduced costs made to agree."""
    x, y = dense(m, x), {c.name: F(y.get(c.name, 0)) for c in m.constraints}
    cost = dict(m.objective)
    g = transposed(m, y)
    obj = sum((cost.get(n, 0) * v for n, v in x.items()), F(m.objective_constant))
    d = {v.name: cost.get(v.name, 0) - g[v.name] for v in m.variables}
    return {**head(m, "optimal"), "objective": format_number(obj), "primal": txt(x),
            "activities": txt(times(m, x)), "duals": txt(y), "reduced_costs": txt(d),
            "dual_objective": dual_objective}


def farkas(m, y, rhs) -> dict:
    """An infeasible claim whose bounds' multipliers are ``-A^T y``."""
    y = fr(y)
    mu = {n: -v for n, v in transposed(m, y).items() if v}
    return {**head(m, "infeasible"), "farkas": {
        "multipliers": txt(y), "bounds": txt(mu), "rhs": format_number(F(rhs)),
        "constraints": [c.name for c in m.constraints if y.get(c.name)],
        "bound_variables": [v.name for v in m.variables if mu.get(v.name)]}}


def unbounded(m, x, r) -> dict:
    """An unbounded claim with the point's and the ray's activities made to agree."""
    x, r = dense(m, x), fr(r)
    cost = dict(m.objective)
    return {**head(m, "unbounded"), "primal": txt(x), "activities": txt(times(m, x)), "ray": txt(r),
            "ray_activities": txt(times(m, r)),
            "ray_objective": format_number(sum((cost.get(n, 0) * v for n, v in r.items()), F(0)))}


def crossed(m, kind, name, lower, upper) -> dict:
    return {**head(m, "infeasible"), "crossed_bounds": {"kind": kind, "name": name, "lower": lower, "upper": upper}}


FORGERIES = [
    # -- optimal: the recomputed numbers agree, the proof does not hold --------------------
    ("a variable outside its bounds", MIN_ROWS,
     lambda m: optimal(m, {"a": 0, "b": 5}, {"need": 0, "cap": 0}),
     "bound of 'b' violated: value 5 outside [0, 4]"),
    ("a variable below its lower bound", MIN_ROWS,
     lambda m: optimal(m, {"a": -1, "b": 4}, {"need": 0, "cap": 0}),
     "bound of 'a' violated: value -1 outside [0, inf]"),
    ("a variable with no lower bound above its upper one", OPEN,
     lambda m: optimal(m, {"x": 0, "y": 5, "z": 2, "e": 2}, {}),
     "bound of 'z' violated: value 2 outside [-inf, 1]"),
    ("a row below its lower side", MIN_ROWS,  # a + b = 2 < 5
     lambda m: optimal(m, {"a": 1, "b": 1}, {"need": 0, "cap": 0}),
     "constraint 'need' violated: activity 2 outside [5, inf]"),
    ("a row above its upper side", MIN_ROWS,  # a - b = 6 > 1 (a + b = 6 >= 5 holds)
     lambda m: optimal(m, {"a": 6, "b": 0}, {"need": 0, "cap": 0}),
     "constraint 'cap' violated: activity 6 outside [-inf, 1]"),
    ("a minimising dual on the side a row does not have", MIN_ROWS,
     # y_need = -1 would hold 'need' at an upper side; d = (2 + 1, 3 + 1) = (3, 4) agrees
     lambda m: optimal(m, {"a": 3, "b": 2}, {"need": -1, "cap": 0}),
     "dual of constraint 'need' is -1, which needs a finite upper side, and it has none"),
    ("a minimising dual of the right sign passes to the next row", MIN_ROWS,
     # y = (3, 1): 'need' rests on 5 as it should, 'cap' (y > 0: a lower side) has none
     lambda m: optimal(m, {"a": 3, "b": 2}, {"need": 3, "cap": 1}),
     "dual of constraint 'cap' is 1, which needs a finite lower side, and it has none"),
    ("a maximising dual on the side a row does not have", MAX_ROWS,
     # maximising, y < 0 rests on a lower side, and 'share' has only an upper one
     lambda m: optimal(m, {"a": 6, "b": 0}, {"share": -1}),
     "dual of constraint 'share' is -1, which needs a finite lower side, and it has none"),
    ("a minimising reduced cost on the side a variable does not have", MIN_ROWS,
     # y = (3, 0): d_a = 2 - 3 = -1 would hold a at an upper bound, and a has none
     lambda m: optimal(m, {"a": 3, "b": 2}, {"need": 3, "cap": 0}),
     "reduced cost of 'a' is -1, which needs a finite upper side, and it has none"),
    ("a maximising reduced cost on the side a variable does not have", MAX_ROWS,
     # y = 0: d = (1, 1); maximising, d_a > 0 rests on an upper bound, and a has none
     lambda m: optimal(m, {"a": 0, "b": 3}, {"share": 0}),
     "reduced cost of 'a' is 1, which needs a finite upper side, and it has none"),
    ("a suboptimal point with the optimal duals", MIN_ROWS,
     # (1, 4) is feasible at 2 + 12 = 14; y = (5/2, -1/2) gives d = 0 and the dual 12
     lambda m: optimal(m, {"a": 1, "b": 4}, {"need": "5/2", "cap": "-1/2"}, "12"),
     "duality gap: primal 14, dual 12, gap 2"),
    ("a stated dual objective the duals do not give", MIN_ROWS,
     lambda m: optimal(m, {"a": 3, "b": 2}, {"need": "5/2", "cap": "-1/2"}, "13"),
     "dual_objective: stated 13, but the duals give 12"),
    ("a name the model does not have", MIN_ROWS,
     lambda m: dict(optimal(m, {"a": 3, "b": 2}, {"need": "5/2", "cap": "-1/2"}, "12"),
                    primal={"a": "3", "b": "2", "c": "0"}),
     "primal: 'c' is not in the model"),
    ("a name left out", MIN_ROWS,
     lambda m: dict(optimal(m, {"a": 3, "b": 2}, {"need": "5/2", "cap": "-1/2"}, "12"), primal={"b": "2"}),
     "primal: 'a' is missing"),
    ("a reduced cost of a variable the objective leaves out", OPEN,
     # y has no cost and every dual is 0, so d_y = 0 - 0
     lambda m: {**(c := optimal(m, {"y": 5, "e": 2}, {})), "reduced_costs": {**c["reduced_costs"], "y": "5"}},
     "reduced_costs.y: stated 5, but c - A^T y gives 0"),
    # -- infeasible: Farkas multipliers that cancel the variables but contradict nothing ------
    ("a combination that gives 0 >= 0", TIGHT,
     # 1 * (x + y >= 5) - (x <= 3) - (y <= 2): 0 >= 5 - 3 - 2 = 0
     lambda m: farkas(m, {"need": 1}, 0),
     "farkas: the combination gives 0 >= 0, which is no contradiction"),
    ("a combination that gives 0 >= a negative number", TIGHT.replace(">= 5", ">= 4"),
     lambda m: farkas(m, {"need": 1}, -1),  # 0 >= 4 - 3 - 2 = -1
     "farkas: the combination gives 0 >= -1, which is no contradiction"),
    ("a combination with a weight of the wrong sign", TIGHT,
     # -1 * (x + y >= 5) would take an upper side of 'need', which it does not have
     lambda m: farkas(m, {"need": -1}, 0),
     "farkas uses the infinite upper side of constraint 'need'"),
    ("a combination through a bound that is not there", OPEN,
     # 1 * 'need': mu = (-1, -1, 0) uses x <= 3 and an upper bound of y, which is infinite
     lambda m: farkas(m, {"need": 1}, 0),
     "farkas uses the infinite upper side of bound of 'y'"),
    ("a combination through a lower bound that is not there", OPEN,
     # -1 * 'cap' (x + z <= 1): mu = (1, 0, 1) uses x >= 0 and a lower bound of z
     lambda m: farkas(m, {"cap": -1}, 0),
     "farkas uses the infinite lower side of bound of 'z'"),
    ("a right-hand side the multipliers do not give", TIGHT.replace(">= 5", ">= 6"),
     lambda m: farkas(m, {"need": 1}, 2),  # 6 - 3 - 2 = 1, not 2
     "farkas.rhs: stated 2, but the multipliers give 1"),
    ("a list of rows that is not the multipliers' support", "minimize: x\nvariables: {x: {upper: 3}}\n"
     "constraints:\n  need: x >= 5\n",
     lambda m: {**farkas(m, {"need": 1}, 2), "farkas": {**farkas(m, {"need": 1}, 2)["farkas"], "constraints": []}},
     "farkas.constraints: stated [], but the nonzero multipliers are ['need']"),
    ("a list of bounds that is not the multipliers' support", "minimize: x\nvariables: {x: {upper: 3}}\n"
     "constraints:\n  need: x >= 5\n",
     lambda m: {**farkas(m, {"need": 1}, 2),
                "farkas": {**farkas(m, {"need": 1}, 2)["farkas"], "bound_variables": ["x", "x"]}},
     "farkas.bound_variables: stated ['x', 'x'], but the nonzero multipliers are ['x']"),
    ("a bound's multiplier left out", TIGHT.replace(">= 5", ">= 6"),
     # 'need' weighs x by 1, so its bound needs -1; left out, it reads as 0
     lambda m: {**(c := farkas(m, {"need": 1}, 1)), "farkas": {**c["farkas"], "bounds": {"y": "-1"}}},
     "farkas.bounds.x: stated 0, but -A^T y gives -1"),
    # -- infeasible: bounds that are said to cross (see CROSSED below) ------------------------
    # -- unbounded: a feasible point and a direction that is not a ray of improvement ---------
    ("a ray into an upper bound", RAYS, lambda m: unbounded(m, {}, {"y": 1}),
     "ray.y = 1 runs into a finite bound of 'y'"),
    ("a ray into a lower bound", RAYS, lambda m: unbounded(m, {}, {"x": -1}),
     "ray.x = -1 runs into a finite bound of 'x'"),
    ("a ray out through a row's upper side", RAYS, lambda m: unbounded(m, {}, {"x": 1}),  # A r = (1, 0)
     "the ray leaves constraint 'link' (A r = 1 runs into a finite side)"),
    ("a ray out through a row's lower side", RAYS, lambda m: unbounded(m, {}, {"z": -1}),  # A r = (0, -1)
     "the ray leaves constraint 'floor' (A r = -1 runs into a finite side)"),
    ("a ray that does not move the objective", RAYS, lambda m: unbounded(m, {}, {}),
     "the ray does not improve the objective (c^T r = 0)"),
    ("a maximising ray that worsens it", RAYS, lambda m: unbounded(m, {}, {"w": 1}),  # c^T r = -1
     "the ray does not improve the objective (c^T r = -1)"),
    ("a minimising ray that worsens it", "minimize: x\nvariables: {x: {}}\n",
     lambda m: unbounded(m, {}, {"x": 2}), "the ray does not improve the objective (c^T r = 2)"),
    ("a ray from a point outside the rows", RAYS, lambda m: unbounded(m, {"x": 3}, {"w": 1}),
     "constraint 'link' violated: activity 3 outside [-inf, 2]"),
]

# bounds said to cross: (what, model, kind, name, lower, upper, detail); every one but
# the last names an item whose sides do not cross, or no item the model has
CROSSED = [
    ("bounds that do not cross", TIGHT, "variable", "x", "0", "3", "the bounds of variable 'x' do not cross"),
    ("bounds that are equal", OPEN, "variable", "e", "2", "2", "the bounds of variable 'e' do not cross"),
    ("a bound that is not there", OPEN, "variable", "y", "0", "0", "the bounds of variable 'y' do not cross"),
    ("a row's sides that do not cross", TIGHT, "constraint", "need", "5", "4",
     "the bounds of constraint 'need' do not cross"),
    ("an item the model does not have", TIGHT, "variable", "q", "1", "0", "the model has no variable 'q'"),
    ("a kind that is neither", TIGHT, "bound", "x", "1", "0", "needs kind (variable or constraint) and name"),
    ("crossed bounds stated other than the model's", "minimize: x\nvariables: {x: {lower: 5, upper: 3}}\n",
     "variable", "x", "6", "3", "the stated bounds differ from the model's"),
]
FORGERIES += [(what, text, (lambda m, a=(kind, name, lo, hi): crossed(m, *a)), f"crossed_bounds: {detail}")
              for what, text, kind, name, lo, hi, detail in CROSSED]


@pytest.mark.parametrize("name, text, forge, detail", FORGERIES, ids=[f[0] for f in FORGERIES])
def test_a_consistent_forgery_is_refused_by_name(name, text, forge, detail):
    m = model_from_text(text)
    v = verify(m, forge(m))
    assert (v.valid, v.failure.detail) == (False, detail)
    assert v.checks[-1].name == "certificate" and not v.checks[-1].ok


def test_the_forgeries_builders_make_valid_certificates_when_the_claim_holds():
    # the builders are not forging by construction: with the true numbers each is accepted
    m = model_from_text(MIN_ROWS)
    v = verify(m, optimal(m, {"a": 3, "b": 2}, {"need": "5/2", "cap": "-1/2"}, "12"))
    assert (v.valid, v.status) == (True, "optimal")
    m = model_from_text(TIGHT.replace(">= 5", ">= 6"))
    v = verify(m, farkas(m, {"need": 1}, 1))  # 0 >= 6 - 3 - 2 = 1
    assert (v.valid, v.status) == (True, "infeasible")
    m = model_from_text(RAYS.replace("- w", "+ w"))  # w grows without limit
    v = verify(m, unbounded(m, {}, {"w": 1}))
    assert (v.valid, v.status) == (True, "unbounded")
    m = model_from_text(MAX_ROWS)
    # maximising a + b with a = 6 - 2b on the row: 6 - b, largest at b = -2 (a = 10, 8);
    # y = 1 rests on the row's upper side 6 and d = (1 - 1, 1 - 2) = (0, -1) rests b on
    # its lower bound -2 (maximising, d < 0): the dual 6 * 1 + (-1) * (-2) = 8
    v = verify(m, optimal(m, {"a": 10, "b": -2}, {"share": 1}, "8"))
    assert (v.valid, v.status) == (True, "optimal")


def test_the_verdicts_are_frozen():
    m = model_from_text(MIN_ROWS)
    v = verify(m, optimal(m, {"a": 3, "b": 2}, {"need": "5/2", "cap": "-1/2"}, "12"))
    with pytest.raises(dataclasses.FrozenInstanceError):
        v.valid = False
    with pytest.raises(dataclasses.FrozenInstanceError):
        v.checks[0].ok = False


# -- priority tiers ------------------------------------------------------------------------
def _tiers():
    from exactlp.stages import solve_stages, staged_certificate

    m = exactlp.load(CASES / "water_priority.yaml")
    return m, staged_certificate(m, solve_stages(m))


TIER_FORGERIES = [
    ("no tiers", lambda c: c.update(stages=[]), "stages: expected one certificate per tier, in order"),
    ("not a list", lambda c: c.update(stages={"senior": 1}), "stages: expected one certificate per tier, in order"),
    ("a tier too many", lambda c: c["stages"].append(copy.deepcopy(c["stages"][-1])),
     "stages: expected one certificate per tier, in order"),
    ("tiers out of order", lambda c: c["stages"].reverse(), "stages.1: expected the certificate of tier 'senior'"),
    ("a tier without its certificate", lambda c: c["stages"][1].pop("certificate"),
     "stages.2: expected the certificate of tier 'benefit'"),
    ("the last tier left out", lambda c: c["stages"].pop(), "stages: tier 'benefit' is missing"),
    # the first tier's optimum holds both seniors at their caps and the juniors at 0:
    # the river carries 300 + 250 = 550, and 549 with senior_a at 299
    ("a tier's own proof broken", lambda c: c["stages"][0]["certificate"]["primal"].update(senior_a="299"),
     "stage 'senior': activities.river: stated 550, but A x gives 549"),
    ("the top-level status not the last tier's", lambda c: c.update(status="infeasible"),
     "status and objective must be those of the last stage"),
]


@pytest.mark.parametrize("name, change, detail", TIER_FORGERIES, ids=[f[0] for f in TIER_FORGERIES])
def test_a_forged_tier_is_refused_by_name(name, change, detail):
    m, cert = _tiers()
    assert verify(m, cert).valid
    bad = copy.deepcopy(cert)
    change(bad)
    assert verify(m, bad).failure.detail == detail


def test_an_infeasible_tier_ends_the_tiers():
    # 'floor' asks senior_a >= 400 of a holder whose entitlement is 300: the first tier
    # is infeasible (Farkas: 1 * floor - 1 * (senior_a <= 300) gives 0 >= 100), so its
    # certificate stands alone, and no later tier may follow it
    from exactlp.stages import solve_stages, staged_certificate

    text = (CASES / "water_priority.yaml").read_text() + "  floor: senior_a >= 400\n"
    m = model_from_text(text)
    cert = staged_certificate(m, solve_stages(m))
    assert [s["name"] for s in cert["stages"]] == ["senior"] and cert["status"] == "infeasible"
    v = verify(m, cert)
    assert (v.valid, v.status) == (True, "infeasible")
    bad = copy.deepcopy(cert)
    bad["stages"].append({"name": "benefit", "certificate": copy.deepcopy(cert["stages"][0]["certificate"])})
    assert verify(m, bad).failure.detail == "stage 'senior' is infeasible, so no later stage can follow it"


# -- range ends of a ranges report -----------------------------------------------------------
# A ranges report proves each solved end of a variable's range over the optimal set
# by the entries that moved from the optimum and the duals of the probe (the model
# with 'c^T x = z*' held, the variable minimised or maximised), or by a ray where the
# end is infinite.  report_check._probe_end re-proves each end from those alone; a
# forged end must be refused by name at the condition it breaks.
# maximise x + y, 0 <= x, y <= 3, x + y <= 4: the optimum 4 at (1, 3), and every
# point of x + y = 4 with 1 <= x <= 3 is optimal; x's max end is (3, 1), proven by
# no duals at all (its reduced cost 1 rests on x's upper bound 3)
FACE = "maximize: x + y\nvariables: {x: {upper: 3}, y: {upper: 3}}\nconstraints:\n  cap: x + y <= 4\n"
# minimise x + y, 0 <= x, y <= 3, x + y >= 4: the optimum 4 at (3, 1); x's min end
# (1, 3) is proven by the dual 1 on 'need' (d_y = -1 rests on y's upper bound 3:
# 4 * 1 - 3 = 1)
FLOOR = "minimize: x + y\nvariables: {x: {upper: 3}, y: {upper: 3}}\nconstraints:\n  need: x + y >= 4\n"
# minimise x, x - y <= 0: every (0, y), y >= 0, is optimal, and y rises without end
# along the ray (0, 1)
OPEN_SET = "minimize: x\nvariables: {x: {}, y: {}}\nconstraints:\n  c: x - y <= 0\n"

# OPEN_SET with more sides around it: z is boxed and held by 'e'; w follows y
# within 10 either way ('g', 'h'); y still rises without end, along (0, 1, 0, 1)
# or (0, 1, 0, 0)
SIDES = ("minimize: x\nvariables: {x: {}, y: {}, z: {upper: 5}, w: {}}\n"
         "constraints:\n  c: x - y <= 0\n  d: x + y >= 0\n  e: z <= 4\n  g: y - w <= 10\n  h: y - w >= -10\n")


def _proof(side):
    return lambda r: r["x"]["proofs"][side]


RANGE_FORGERIES = [
    ("no proof", FACE, lambda r: r["x"]["proofs"].update(max="none"), "ranges.x.max: no proof of this end"),
    ("an infinite end without a ray", FACE, lambda r: r["x"].update(max=None),
     "ranges.x.max: an infinite end needs a ray"),
    ("a ray for a finite end", FACE, lambda r: _proof("max")(r).update(ray={"x": "1"}),
     "ranges.x.max: a ray proves no finite end, and the report gives 3"),
    ("both kinds of duals", FACE, lambda r: _proof("max")(r).update(duals={}),
     "ranges.x.max: an end gives its duals or its face's duals, not both"),
    # x moved past its upper bound 3, then past its lower bound 0
    ("past an upper bound", FACE, lambda r: _proof("max")(r).update(moved={"x": "4", "y": "0"}),
     "ranges.x.max: 'x' = 4 breaks its bounds"),
    ("past a lower bound", FACE, lambda r: _proof("min")(r).update(moved={"x": "-1", "y": "3"}),
     "ranges.x.min: 'x' = -1 breaks its bounds"),
    # (3, 3): 'cap' at 6 > 4; (1, 2) in FLOOR: 'need' at 3 < 4
    ("past a row's upper side", FACE, lambda r: _proof("max")(r).update(moved={"x": "3", "y": "3"}),
     "ranges.x.max: constraint 'cap' fails at the point (6)"),
    ("past a row's lower side", FLOOR, lambda r: _proof("min")(r).update(moved={"x": "1", "y": "2"}),
     "ranges.x.min: constraint 'need' fails at the point (3)"),
    # (3, 0) is feasible but x + y = 3, not the optimum 4
    ("off the optimal set", FACE, lambda r: _proof("max")(r).update(moved={"x": "3", "y": "0"}),
     "ranges.x.max: the point leaves the optimal set (the held objective moves)"),
    # held dual 1: the duals u - 1 * y* give 'cap' -1, which (maximising) must rest
    # on a lower side that 'cap' lacks
    ("a dual on a missing side", FACE, lambda r: _proof("max")(r).update(held_dual="1"),
     "ranges.x.max: dual of constraint 'cap' is -1, which needs a finite lower side, and it has none"),
    # 'need' -1 (minimising) needs an upper side
    ("a dual of the wrong sign", FLOOR, lambda r: _proof("min")(r).update(face_duals={"need": "-1"}),
     "ranges.x.min: dual of constraint 'need' is -1, which needs a finite upper side, and it has none"),
    # face duals {cap: 1}, held 1: the duals are 1 - 1 * 1 = 0 and the reduced costs
    # e_x - 1 * c = (0, -1); with held 4 * 1 and d_y = -1 on y's lower bound 0, the
    # dual objective is 4, and the point (3, 1) gives x = 3
    ("a gap", FACE, lambda r: _proof("max")(r).update(face_duals={"cap": "1"}, held_dual="1"),
     "ranges.x.max: the duals leave a gap (3 against 4)"),
    # y's min end in OPEN_SET with held dual 1: the reduced costs e_y - c = (-1, 1),
    # and x's -1 (minimising) must rest on an upper bound x lacks
    ("a reduced cost on a missing side", OPEN_SET,
     lambda r: r["y"]["proofs"]["min"].update(held_dual="1"),
     "ranges.y.min: reduced cost of 'x' is -1, which needs a finite upper side, and it has none"),
    # y's infinite end: x along the ray leaves 'c' (x - y rises); (1, 1) keeps 'c'
    # but raises the held objective x; a proof of a finite end in place of a ray
    ("a ray leaving a row", OPEN_SET, lambda r: r["y"]["proofs"]["max"].update(ray={"x": "1"}),
     "ranges.y.max: the ray leaves constraint 'c'"),
    # z along the ray runs into its upper bound 5, x into its lower bound 0
    ("a ray into an upper bound", SIDES, lambda r: r["y"]["proofs"]["max"].update(ray={"y": "1", "z": "1"}),
     "ranges.y.max: the ray runs into a bound of 'z'"),
    ("a ray into a lower bound", SIDES, lambda r: r["y"]["proofs"]["max"].update(ray={"x": "-1", "y": "1"}),
     "ranges.y.max: the ray runs into a bound of 'x'"),
    ("a ray off the optimal set", OPEN_SET, lambda r: r["y"]["proofs"]["max"].update(ray={"x": "1", "y": "1"}),
     "ranges.y.max: the ray changes the held objective"),
    ("an infinite end with a point", OPEN_SET,
     lambda r: r["y"]["proofs"].update(max={"moved": {}, "face_duals": {}, "held_dual": "0"}),
     "ranges.y.max: an infinite end needs a ray"),
]


@pytest.mark.parametrize("name, text, change, detail", RANGE_FORGERIES, ids=[f[0] for f in RANGE_FORGERIES])
def test_a_forged_range_end_is_refused_by_name(name, text, change, detail):
    from exactlp.analysis import ranges
    from exactlp.report_check import check_report
    from exactlp.reports import ranges_report

    m = model_from_text(text)
    rep = ranges_report(m, ranges(m))
    assert check_report(m, rep).valid
    bad = copy.deepcopy(rep)
    change(bad["ranges"])
    v = check_report(m, bad)
    assert (v.valid, v.failure.detail) == (False, detail)


def test_a_range_end_written_with_explicit_zeros_still_proves_it():
    # not a forgery: a ray or a point may name entries that do not move (0 in the
    # ray, the optimum's own value in the point).  A zero entry of the ray touches
    # x (a lower bound and a cost) and z (an upper bound) without moving them; the
    # ray (y, w) = (1, 1) moves 'g' and 'h' by 1 - 1 = 0, so it leaves neither the
    # upper side of one nor the lower side of the other
    from exactlp.analysis import ranges
    from exactlp.report_check import check_report
    from exactlp.reports import ranges_report

    m = model_from_text(SIDES)
    rep = ranges_report(m, ranges(m))
    assert check_report(m, rep).valid
    assert rep["ranges"]["z"]["proofs"]["max"]["moved"] == {"z": "4"}
    rep["ranges"]["y"]["proofs"]["max"]["ray"] = {"y": "1", "w": "1", "x": "0", "z": "0"}
    rep["ranges"]["z"]["proofs"]["max"]["moved"] = {"z": "4", "x": "0", "y": "0"}
    assert check_report(m, rep).valid

"""Fairness and priority models (issue 8): abs(), max()/min() and priority tiers.

Each case's exact objective is derived by hand and confirmed on the expanded
linear program with scipy (within its tolerance); published properties are
checked on generated data.
"""

import copy
import json
import random
from fractions import Fraction as F

import pytest

import exactlp
from exactlp.certificate import build_certificate
from exactlp.io import model_from_text
from exactlp.reform import evaluate

from .conftest import CASES
from .helpers import scipy_solve, solve_verified


def test_minimax_drought_by_hand_and_scipy():
    # requests 400, 300, 250, 350 and 1000 ML: equal shortfall s with (1 - s) 1300 = 1000,
    # so s = 3/13, and each town gets 10/13 of its request (no cap binds).
    m = exactlp.load(CASES / "drought_minimax.yaml")
    r = solve_verified(m)
    assert r.objective == F(3, 13)
    assert {k: r.primal[k] for k in ("north", "south", "east", "west")} == {
        "north": F(4000, 13), "south": F(3000, 13), "east": F(2500, 13), "west": F(3500, 13)}
    assert evaluate(m.auxiliary[0], r.primal) == F(3, 13)
    status, obj = scipy_solve(m)
    assert status == "optimal" and abs(obj - 3 / 13) < 1e-9


def test_closest_to_historic_by_hand_and_scipy():
    # last year's split sums to the fund (900); the new caps force p2 down 30 and p4
    # down 15, and those 45 must go to p1, p3 or p5: total deviation 30 + 15 + 45 = 90.
    m = exactlp.load(CASES / "shares_historic.yaml")
    r = solve_verified(m)
    assert r.objective == 90
    assert (r.primal["p2"], r.primal["p4"]) == (F(230), F(185))
    status, obj = scipy_solve(m)
    assert status == "optimal" and abs(obj - 90) < 1e-7
    from exactlp.analysis import ranges

    rg = ranges(m, ["p1", "p3", "p5"])  # where the 45 go is left open by the rule
    assert rg.unique is False and rg.ranges["p1"].minimum == 120 and rg.ranges["p1"].maximum == 165


def test_priority_tiers_by_hand(tmp_path):
    # tier 1: senior_a + senior_b <= 300 + 250 = 550, reachable.  Tier 2 holds 550 (so both
    # seniors at their caps); 350 ML remain and the upper reach leaves junior_c <= 200:
    # 12*300 + 9*250 + 21*200 + 15*150 = 12300.
    from exactlp.stages import solve_stages, staged_certificate

    m = exactlp.load(CASES / "water_priority.yaml")
    st = solve_stages(m)
    assert [(n, r.objective) for n, _, r in st.stages] == [("senior", 550), ("benefit", 12300)]
    last_model = st.stages[-1][1]
    held = next(c for c in last_model.constraints if c.name == "senior.held")
    assert (held.lower, held.upper) == (F(550), F(550))
    status, obj = scipy_solve(last_model)  # the expanded second stage, by the float reference
    assert status == "optimal" and abs(obj - 12300) < 1e-6
    cert = staged_certificate(m, st)
    assert [s["name"] for s in cert["stages"]] == ["senior", "benefit"]
    assert cert["status"] == "optimal" and cert["objective"] == "12300"
    assert exactlp.verify(m, cert).valid
    bad = copy.deepcopy(cert)  # a held value that is not the previous certified optimum
    bad["stages"][0]["certificate"]["objective"] = "549"
    assert not exactlp.verify(m, bad).valid
    bad = copy.deepcopy(cert)
    bad["objective"] = "12299"
    assert exactlp.verify(m, bad).failure.detail == "status and objective must be those of the last stage"


def test_three_tiers_hold_each_optimum_in_turn():
    # by hand: p first (10, its cap); then q with p = 10 held (15 - 10 = 5 left in
    # 'total'); then r - q with p = 10 and q = 5 held: r <= 0, so r = 0 and -5
    import dataclasses

    from exactlp.stages import solve_stages, staged_certificate

    m = model_from_text(
        "name: three tiers\nobjectives:\n  - name: first\n    maximize: p\n  - name: second\n    maximize: q\n"
        "  - name: third\n    maximize: r - q\nvariables: {p: {upper: 10}, q: {upper: 10}, r: {upper: 10}}\n"
        "constraints:\n  total: p + q + r <= 15\n")
    events = []
    st = solve_stages(m, listener=events.append)
    assert [(n, r.objective) for n, _, r in st.stages] == [("first", 10), ("second", 5), ("third", -5)]
    assert st.final.objective == -5 and type(st.final.objective) is F
    assert [e for e in events if type(e) is tuple] == [("stage", 1, "first"), ("stage", 2, "second"),
                                                       ("stage", 3, "third")]
    assert exactlp.verify(m, staged_certificate(m, st)).valid
    with pytest.raises(dataclasses.FrozenInstanceError):
        st.stages = ()


# Each allowed use of abs(), max() and min(), in the objective and in a row, on
# either side and with either sense; every optimum by hand in the comment.
CALL_USES = [
    ("maximize: min(a, b)\nvariables: {a: {upper: 4}, b: {upper: 6}}\n", 4),  # min(4, 6)
    ("maximize: 7 - abs(x - 3)\nvariables: {x: {upper: 10}}\n", 7),  # x = 3
    ("minimize: x\nvariables: {x: {}}\nconstraints:\n  c: abs(x - 3) <= 2\n", 1),  # 1 <= x <= 5
    ("minimize: a + b\nvariables: {a: {}, b: {}}\nconstraints:\n  c: min(a, b) >= 1\n", 2),  # a, b >= 1
    ("maximize: a + b\nvariables: {a: {}, b: {}}\nconstraints:\n  c: max(a, b) <= 3\n", 6),  # a, b <= 3
    ("maximize: x\nvariables: {x: {}, y: free}\nconstraints:\n  c: x + 2 abs(y - 1) <= 4\n", 4),  # y = 1
    ("maximize: x\nvariables: {x: {}}\nconstraints:\n  c: 6 >= x + max(x, 2)\n", 3),  # 2x <= 6
    ("maximize: {terms: {x: 1}}\nvariables: {x: {upper: 2}}\n", 2),  # no constant: 0
    # weights that are not 1: 1/2 |x - 4| + 1/3 max(x, 6) is 2 at x = 4 and grows either side
    ("minimize: 1/2 abs(x - 4) + 1/3 max(x, 6)\nvariables: {x: {}}\n", 2),
    ("maximize: 1/2 min(a, b)\nvariables: {a: {upper: 4}, b: {upper: 6}}\n", 2),
]


@pytest.mark.parametrize("text, optimum", CALL_USES)
def test_each_use_of_a_call_solves_to_its_optimum_by_hand(text, optimum):
    m = model_from_text(text)
    r = solve_verified(m)
    assert (r.status.value, r.objective, type(r.objective)) == ("optimal", optimum, F)


def test_the_last_tier_gives_the_models_sense_and_objective():
    m = model_from_text(
        "objectives:\n  - name: one\n    maximize: p\n  - name: two\n    maximize: q\n"
        "  - name: three\n    minimize: 2 r + 1\nvariables: {p: {upper: 1}, q: {upper: 1}, r: {upper: 1}}\n")
    assert (m.sense.value, m.objective, m.objective_constant) == ("minimize", (("r", F(2)),), 1)


def test_auxiliary_rows_are_named_and_evaluated_as_written():
    # max(a, b) in the objective becomes objective.max1 >= a and >= b, rows
    # objective.max1.1 and .2 (counted from 1); evaluate gives each function's
    # value at a point, exactly
    import dataclasses

    from exactlp.reform import evaluate

    m = model_from_text("minimize: max(a, b) + abs(a - 5) - min(b, 1)\nvariables: {a: {}, b: {}}\n")
    assert [c.name for c in m.constraints] == ["objective.max1.1", "objective.max1.2", "objective.abs1.pos",
                                              "objective.abs1.neg", "objective.min1.1", "objective.min1.2"]
    point = {"a": F(3), "b": F(7, 2)}
    assert [(x.name, evaluate(x, point)) for x in m.auxiliary] == [
        ("objective.max1", F(7, 2)), ("objective.abs1", F(2)), ("objective.min1", F(1))]
    with pytest.raises(dataclasses.FrozenInstanceError):
        m.auxiliary[0].name = "other"


def test_priority_through_cli(cli, tmp_path):
    cert = tmp_path / "c.yaml"
    code, out, _ = cli("solve", CASES / "water_priority.yaml", "-c", cert)
    assert code == 0 and "Priority tiers of Senior rights first, then benefit" in out
    code, out, _ = cli("verify", CASES / "water_priority.yaml", cert)
    assert code == 0 and "pass  stage 'senior': optimal, objective 550" in out


THREE_TIERS = (CASES / "water_priority.yaml").read_text().replace(
    "  - name: benefit\n", "  - name: junior\n    maximize: junior_c + junior_d\n  - name: benefit\n")


def test_three_tiers_through_cli_name_the_model_file_and_show_the_last_tier(cli, write):
    # by hand: the seniors' 300 + 250 = 550 first; held at 550, the juniors share
    # what the river leaves, 900 - 550 = 350, junior_c at most 500 - 300 = 200 by
    # the upper reach; held at that too, the benefit puts junior_c at its 200 (21
    # a megalitre against 15): 12 * 300 + 9 * 250 + 21 * 200 + 15 * 150 = 12300
    path = write("three.yaml", THREE_TIERS)
    m = exactlp.load(path)
    code, out, _ = cli("solve", path, "--json")
    doc = json.loads(out)
    assert code == 0 and doc["stages"] == [{"name": "senior", "objective": "550", "status": "optimal"},
                                           {"name": "junior", "objective": "350", "status": "optimal"},
                                           {"name": "benefit", "objective": "12300", "status": "optimal"}]
    assert doc["model"] == {"name": m.name, "fingerprint": m.fingerprint} and doc["objective"] == "12300"
    assert doc["primal"] == {"senior_a": "300", "senior_b": "250", "junior_c": "200", "junior_d": "150"}
    # the last tier's duals, checked by hand against the basic columns' costs:
    # junior_d 15 = river 6 + junior.held 9, junior_c 21 = 6 + upper_reach 6 + 9,
    # senior_a 12 = 6 + 6 + senior.held 0 (and senior_b, at its upper bound, has 9 - 6 - 0 = 3 > 0)
    assert doc["duals"] == {"river": "6", "upper_reach": "6", "senior.held": "0", "junior.held": "9"}
    # the screen: the model line names the file's model (the certificate's
    # fingerprint, not the last tier's own program's), whose rows hold both tiers
    code, out, _ = cli("solve", path)
    table = [line.split() for line in out.splitlines()]
    assert code == 0 and ["model", *m.name.split(), f"({m.fingerprint[:19]}…)"] in table
    assert ["senior.held", "550", "550", "550"] == next(r for r in table if r[:1] == ["senior.held"])[:4]
    assert ["junior.held", "350", "350", "350"] == next(r for r in table if r[:1] == ["junior.held"])[:4]


def test_a_first_tier_without_an_optimum_ends_the_json_stages(cli, write):
    # senior_a at least 400 against its entitlement of 300: the first tier is
    # infeasible, no later tier is solved, and its objective is null
    path = write("floor.yaml", THREE_TIERS + "  floor: senior_a >= 400\n")
    code, out, _ = cli("solve", path, "--json")
    doc = json.loads(out)
    assert code == 0 and doc["status"] == "infeasible"
    assert doc["stages"] == [{"name": "senior", "objective": None, "status": "infeasible"}]
    # Farkas: floor's senior_a >= 400 less senior_a <= 300 gives 0 >= 100
    assert doc["farkas"] == {"bound_variables": ["senior_a"], "bounds": {"senior_a": "-1"}, "constraints": ["floor"],
                             "multipliers": {"floor": "1"}, "rhs": "100"}
    code, out, _ = cli("solve", path)  # the screen's tier table: no optimum to show
    assert code == 0 and [line.rstrip() for line in out.splitlines()[2:5]] == [
        "  tier     goal                           outcome      optimum",
        " " + "─" * 62,
        "  senior   maximize senior_a + senior_b   infeasible"]
    # (and the tier's own Farkas proof below it: this screen once ended in an
    # internal error, reading the proof's right-hand side from the tiers' certificate)
    assert "Adding these rules with these weights gives 0 >= 100, which no allocation can satisfy." in out


def test_show_keeps_a_written_rule_and_expanded_shows_its_rows(cli, write):
    # 'dev: abs(x - 3) <= 2' is shown as written; --expanded shows the program
    # solved: dev.abs1 >= x - 3 and >= 3 - x, and dev.abs1 <= 2
    path = write("dev.yaml", "minimize: x\nvariables: {x: {upper: 9}}\nconstraints:\n  dev: abs(x - 3) <= 2\n")
    code, out, _ = cli("show", path)
    table = [line.rstrip() for line in out.splitlines()]
    assert code == 0 and table[2] == "(the linear program actually solved: exactlp show --expanded)"
    assert "  dev          abs(x - 3) <= 2" in table and not any("dev.abs1" in line for line in table)
    code, out, _ = cli("show", path, "--expanded")
    table = [line.rstrip() for line in out.splitlines()]
    assert code == 0 and table[2] == "(expanded: 1 auxiliary variable stands for abs(), max() and min())"
    assert [line.split() for line in table if line.startswith("  dev")] == [
        ["dev.abs1", "0", "inf", "auxiliary:", "abs(x", "-", "3)", "in", "dev"],
        ["dev", "dev.abs1", "<=", "2"], ["dev.abs1.pos", "dev.abs1", "-", "x", ">=", "-3"],
        ["dev.abs1.neg", "dev.abs1", "+", "x", ">=", "3"]]


def test_show_expanded(cli):
    code, out, _ = cli("show", CASES / "shares_historic.yaml")
    assert code == 0 and "objective.abs1" not in out
    assert "Objective: minimize abs(p1 - 120) + abs(p2 - 260)" in out
    code, out, _ = cli("show", CASES / "shares_historic.yaml", "--expanded")
    assert "objective.abs1" in out and "objective.abs1.pos" in out


@pytest.mark.parametrize(
    "text, tail",
    [
        ("maximize: abs(a - 2)\nvariables: {a: {upper: 3}}\n",
         "1:11: maximize: abs(a - 2): abs() can only be kept small: minimised, or bounded above ('abs(e) <= b'); "
         "asking it to be large describes two separate regions, which is not a linear program"),
        ("minimize: min(a, b)\nvariables: {a: {}, b: {}}\n",
         "1:11: minimize: min(a, b): min() can only be kept large: maximised, or bounded below ('min(...) >= b'); "
         "pushing a minimum down is not a linear program"),
        # a weight that is not 1 keeps its sign's verdict
        ("minimize: 1/2 min(a, b)\nvariables: {a: {}, b: {}}\n",
         "1:15: minimize: min(a, b): min() can only be kept large: maximised, or bounded below ('min(...) >= b'); "
         "pushing a minimum down is not a linear program"),
        ("maximize: max(a, b)\nvariables: {a: {upper: 1}, b: {upper: 1}}\n",
         "1:11: maximize: max(a, b): max() can only be kept small: minimised, or bounded above ('max(...) <= b'); "
         "pushing a maximum up is not a linear program"),
        ("minimize: a\nvariables: {a: {}}\nconstraints:\n  c: abs(a - 2) >= 1\n",
         "4:6: constraints.c: abs(a - 2): abs() can only be kept small: minimised, or bounded above ('abs(e) <= b'); "
         "asking it to be large describes two separate regions, which is not a linear program"),
        ("minimize: a\nvariables: {a: {}}\nconstraints:\n  c: abs(a) == 1\n",
         "4:6: constraints.c: abs(a): abs(), max() and min() need a one-sided inequality (<= or >=), not == or a range"),
        ("minimize: a\nvariables: {a: {}}\nconstraints:\n  c: 0 <= abs(a) <= 1\n",
         "4:11: constraints.c: abs(), max() and min() cannot stand in a chained comparison: write each side as its own constraint"),
        ("minimize: abs(max(a, 1))\nvariables: {a: {}}\n",
         "1:15: minimize: max() cannot stand inside another abs(), max() or min()"),
    ],
)
def test_non_convex_uses_are_refused(cli, write, text, tail):
    path = write("m.yaml", text)
    code, out, err = cli("check", path)
    assert (code, out) == (2, "")
    assert err == f"exactlp: {path}:{tail}\n"


def _points(seed, m):
    rng = random.Random(seed)
    xs = sorted(rng.sample(range(-20, 21), m))
    return [(F(x), F(rng.randint(-50, 50), rng.randint(1, 4))) for x in xs]


@pytest.mark.parametrize("seed", range(12))
def test_chebyshev_line_fit_equioscillates(seed):
    # Chebyshev's equioscillation theorem (from memory; e.g. E. W. Cheney, Introduction to
    # Approximation Theory, 1966): the best uniform line fit to m >= 3 points with distinct x
    # attains its largest error at three points, with alternating signs.
    pts = _points(seed, 3 + seed % 5)
    parts = ", ".join(f"{y} - a - {x} b, a + {x} b - {y}".replace("- -", "+ ").replace("+ -", "- ") for x, y in pts)
    m = model_from_text(f"minimize: max({parts})\nvariables: {{a: free, b: free}}\n")
    r = solve_verified(m)
    a, b, e = r.primal["a"], r.primal["b"], r.objective
    res = [y - a - b * x for x, y in pts]
    assert max(abs(v) for v in res) == e
    extremal = [(x, 1 if v > 0 else -1) for (x, _), v in zip(pts, res) if abs(v) == e and e > 0]
    signs = [s for _, s in extremal]
    alternations = sum(1 for s, t in zip(signs, signs[1:]) if s != t)
    assert e == 0 or alternations >= 2


@pytest.mark.parametrize("seed", range(12))
def test_least_absolute_deviations_line_passes_through_two_points(seed):
    # A least-absolute-deviations line fit has an optimal line through at least two of the
    # data points (from memory; e.g. P. Bloomfield and W. L. Steiger, Least Absolute Deviations,
    # 1983); the simplex returns a vertex, which is such a line.
    pts = _points(100 + seed, 4 + seed % 6)
    obj = " + ".join(f"abs({y} - a - {x} b)".replace("- -", "+ ") for x, y in pts)
    m = model_from_text(f"minimize: {obj}\nvariables: {{a: free, b: free}}\n")
    r = solve_verified(m)
    a, b = r.primal["a"], r.primal["b"]
    assert sum(1 for x, y in pts if y == a + b * x) >= 2
    status, obj_ref = scipy_solve(m)
    assert status == "optimal" and abs(obj_ref - float(r.objective)) <= 1e-7 * max(1, abs(obj_ref))


def test_tiers_are_not_mistaken_for_one_objective(cli):
    m = exactlp.load(CASES / "water_priority.yaml")
    with pytest.raises(exactlp.InputError) as exc:
        exactlp.solve(m)
    assert str(exc.value) == ("objectives: this model has priority tiers (objectives:): solve it with "
                              "exactlp.solve_stages(model)")
    code, _, err = cli("sensitivity", CASES / "water_priority.yaml")
    assert code == 2 and err == ("exactlp: objectives: this model has priority tiers: sensitivity and ranges "
                                 "apply to a single objective, not yet to tiers\n")
    assert exactlp.solve_stages(m).final.objective == 12300


def test_conflict_of_an_infeasible_tiered_model():
    from exactlp.analysis import conflict
    from exactlp.report_check import check_report
    from exactlp.reports import conflict_report

    m = model_from_text("objectives:\n  - {name: one, maximize: a}\nvariables: {a: {upper: 3}}\nconstraints:\n  r: a >= 5\n")
    c = conflict(m)
    assert (c.constraints, c.bounds) == (("r",), ("a",))
    assert check_report(m, conflict_report(m, c)).valid


def test_certificate_says_it_is_about_the_expanded_program():
    m = exactlp.load(CASES / "shares_historic.yaml")
    cert = build_certificate(m, exactlp.solve(m))
    assert cert["program"]["expanded"] is True
    assert cert["program"]["auxiliary"]["objective.abs1"] == "abs(p1 - 120)"
    assert exactlp.verify(m, cert).valid


def test_tiered_model_round_trips_and_traces(cli, tmp_path):
    from exactlp.io import dump_yaml_model

    m = exactlp.load(CASES / "water_priority.yaml")
    again = model_from_text(dump_yaml_model(m))
    assert again.fingerprint == m.fingerprint and [s.name for s in again.stages] == ["senior", "benefit"]
    log = tmp_path / "l.jsonl"
    assert cli("solve", CASES / "water_priority.yaml", "-l", log)[0] == 0
    code, out, _ = cli("trace", log)
    table = [line.rstrip() for line in out.splitlines()]
    # the senior tier needs no pivot (its slack basis with both seniors flipped to
    # their entitlements is optimal); the benefit tier's three dual pivots, each with
    # its tier; and a closing line for each tier, the last one's the final optimum
    assert code == 0 and table[3:] == [
        "Pivots",
        "",
        "  tier      #   phase   entering     leaving                             ratio   step   objective   rule",
        " " + "─" * 104,
        "  benefit   1       1   senior_a ↓   river -> upper (+1 flipped)            12    200         450   dual",
        "  benefit   2       1   junior_c ↓   senior.held -> lower (+1 flipped)       9     50         650   dual",
        "  benefit   3       1   junior_d ↑   upper_reach -> upper (+1 flipped)       6    150           0   dual",
        "",
        "closed (senior): optimal, objective 550, pivots 0 + 0, bound flips 0",
        "closed (benefit): optimal, objective 12300, pivots 3 + 0, bound flips 3",
    ]
    # a log cut before the last tier closed says which tier has no closing record
    cut = tmp_path / "cut.jsonl"
    cut.write_text("".join(log.read_text().splitlines(keepends=True)[:-1]))
    code, out, _ = cli("trace", cut)
    assert code == 0 and out.splitlines()[-2:] == [
        "closed (senior): optimal, objective 550, pivots 0 + 0, bound flips 0",
        "closed: no closing record (the run was killed or is still going); tier 'benefit' has none"]

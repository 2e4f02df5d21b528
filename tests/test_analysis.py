"""Post-optimal analysis (issue 7, in part): sensitivity ranges and conflicts.

Ranges are derived by hand in the comments and cross-checked with scipy:
moving a coefficient or limit just inside a reported end keeps the optimal
vertex; just outside it, the optimal vertex changes.
"""

import json
from dataclasses import replace
from fractions import Fraction as F

import pytest

import exactlp
import exactlp.analysis
import exactlp.limits
import exactlp.render
from exactlp.analysis import Interval, conflict, sensitivity
from exactlp.io import model_from_text
from exactlp.model import Constraint
from exactlp.numbers import parse_number

from .conftest import CASES, NETLIB, needs_netlib
from .helpers import calls_recorded, scipy_solve, sympy_solve, with_coefficient

_REPORT_LIMITS = exactlp.limits.Limits(max_number_chars=200_000)
from .models import KNOWN

ZERO_Q = __import__('gmpy2').mpq(0)

THREE = KNOWN[0][1]  # maximize 5 x1 + 4 x2 + 3 x3; optimum 13 at (2, 0, 1), y = (1, 0, 1)


def test_three_resource_ranges_by_hand():
    s = sensitivity(model_from_text(THREE))
    # basic x1: with r1, r3 binding, y3 = 6 - c1 and y1 = 2 c1 - 9 stay >= 0 for 9/2 <= c1 <= 6
    # basic x3: y3 = 2 c3 - 5, y1 = 10 - 3 c3 >= 0 for 5/2 <= c3 <= 10/3
    # nonbasic x2 (reduced cost -3): c2 may rise by 3
    assert s.objective_ranges == {"x1": Interval(F(9, 2), F(6)), "x2": Interval(None, F(7)),
                                  "x3": Interval(F(5, 2), F(10, 3))}
    # r1: x1 = 2 b1 - 8 >= 0 and x3 = 16 - 3 b1 >= 0 give 4 <= b1 <= 16/3
    # r3: x1 = 10 - b3 >= 0 and x3 = 2 b3 - 15 >= 0 give 15/2 <= b3 <= 10; r2 is slack at 10
    rr = s.rhs_ranges
    assert (rr["r1"].interval, rr["r1"].dual) == (Interval(F(4), F(16, 3)), F(1))
    assert (rr["r3"].interval, rr["r3"].dual) == (Interval(F(15, 2), F(10)), F(1))
    assert (rr["r2"].interval, rr["r2"].dual) == (Interval(F(10), None), F(0))


def _with_limit(m, name, which, value):
    cons = []
    for c in m.constraints:
        if c.name == name:
            c = Constraint(c.name, c.terms, value if which in ("lower", "equals") else c.lower,
                           value if which in ("upper", "equals") else c.upper)
        cons.append(c)
    return replace(m, constraints=tuple(cons))


def _vertex(m):
    from scipy.optimize import linprog

    from .helpers import to_linprog

    kw, _ = to_linprog(m)
    r = linprog(**kw)
    return tuple(round(v, 7) for v in r.x)


@pytest.mark.parametrize("path", [None, CASES / "grants.yaml", CASES / "drought.yaml"])
def test_objective_ranges_against_scipy(path):
    m = model_from_text(THREE) if path is None else exactlp.load(path)
    s = sensitivity(m)
    base = _vertex(m)
    x_star = dict(exactlp.solve(m).primal)
    eps = F(1, 1000)
    better = (lambda a, b: a > b) if m.sense.value == "maximize" else (lambda a, b: a < b)
    for name, iv in s.objective_ranges.items():
        for end, inward in ((iv.lower, 1), (iv.upper, -1)):
            if end is None:
                continue
            # just inside: scipy finds the same vertex
            assert _vertex(with_coefficient(m, name, end + inward * eps)) == base, (name, end)
            # just outside: the old optimum is strictly beaten (SymPy's exact optimum)
            outside = with_coefficient(m, name, end - inward * eps)
            assert better(sympy_solve(outside)[1], outside.objective_value(x_star)), (name, end)


@pytest.mark.parametrize("path", [None, CASES / "grants.yaml", CASES / "emissions.yaml", CASES / "berth.yaml"])
def test_rhs_ranges_against_scipy(path):
    # just inside each end the optimum moves at the dual's rate (scipy, within its
    # tolerance); just outside a finite end (when the model is still solvable) it does not
    m = model_from_text(THREE) if path is None else exactlp.load(path)
    s = sensitivity(m)
    z = float(exactlp.solve(m).objective)
    eps = F(1, 1000)
    for name, rr in s.rhs_ranges.items():
        for end, inward in ((rr.interval.lower, 1), (rr.interval.upper, -1)):
            if end is None:
                continue
            inside = end + inward * eps
            status, obj = scipy_solve(_with_limit(m, name, rr.bound, inside))
            assert status == "optimal"
            assert abs(obj - (z + float(rr.dual * (inside - rr.value)))) <= 1e-7 * max(1, abs(z)), (name, end)
            outside = end - inward * eps
            con = next(c for c in m.constraints if c.name == name)
            if (rr.bound == "upper" and con.lower is not None and outside < con.lower) or \
                    (rr.bound == "lower" and con.upper is not None and outside > con.upper):
                continue  # the range ends where the two sides of the row meet
            status, obj = scipy_solve(_with_limit(m, name, rr.bound, outside))
            if status == "optimal":
                assert abs(obj - (z + float(rr.dual * (outside - rr.value)))) > 1e-9 * max(1, abs(z)), (name, end)


def test_conflict_on_the_overcommitted_case_is_minimal():
    m = exactlp.load(CASES / "grants_overcommitted.yaml")
    c = conflict(m)
    assert c.constraints == ("fund", "uplands_floor", "metro_floor")
    assert c.bounds == ("north", "coast")
    assert exactlp.verify(c.model, exactlp.build_certificate(c.model, c.result)).valid
    from exactlp.analysis import _subset

    rows, bounded = set(c.constraints), set(c.bounds)
    for name in c.constraints:  # every one-out subset is feasible
        assert exactlp.solve(_subset(m, rows - {name}, bounded)).status.value == "optimal"
    for name in c.bounds:
        assert exactlp.solve(_subset(m, rows, bounded - {name})).status.value == "optimal"
    # a witness per member: every variable, in the model's order, each a Fraction,
    # read as a dictionary; all of them over one shared map of the names
    names = [v.name for v in m.variables]
    assert sorted(c.witnesses) == sorted([("constraint", n) for n in c.constraints] + [("bound", n) for n in c.bounds])
    for (kind, name), point in c.witnesses.items():
        assert list(point) == names and len(point) == len(names)
        assert all(type(point[n]) is F for n in names) and dict(point) == {n: point[n] for n in names}
        one_out = _subset(m, rows - {name} if kind == "constraint" else rows,
                          bounded - {name} if kind == "bound" else bounded)
        assert all(v.lower is None or point[v.name] >= v.lower for v in one_out.variables)
    assert len({id(p._index) for p in c.witnesses.values()}) == 1


def test_conflict_filter_shrinks_to_each_new_proof_from_a_start_that_is_not_minimal(monkeypatch):
    # The solver's first Farkas proof is usually minimal already, so the filter's
    # shrinking step (a member dropped and the rest still infeasible: keep only
    # what the new proof uses) needs a larger start: here the first proof is made
    # to name every constraint and every bounded variable.  The filter must reach
    # the same minimal set, say each step, and the trials that stay infeasible
    # must shrink the set at once (metro_ceiling: without it the rest is still
    # infeasible, and the new proof leaves out the upper bounds too).
    import dataclasses

    from exactlp import solver
    from exactlp.report_check import check_report
    from exactlp.reports import conflict_report

    m = exactlp.load(CASES / "grants_overcommitted.yaml")
    real = solver.solve
    calls = []

    def solved(model, **options):
        r = real(model, **options)
        calls.append(r.status.value)
        if len(calls) == 1:
            return dataclasses.replace(r, farkas_rows=tuple(c.name for c in model.constraints),
                                       farkas_bounds=tuple(v.name for v in model.variables))
        return r
    monkeypatch.setattr(solver, "solve", solved)
    said = []
    c = conflict(m, progress=said.append)
    assert (c.constraints, c.bounds) == (("fund", "uplands_floor", "metro_floor"), ("north", "coast"))
    assert said == [
        "conflict: 8 rules left; trying without constraint 'fund'",
        "conflict: 8 rules left; trying without constraint 'uplands_floor'",
        "conflict: 8 rules left; trying without constraint 'metro_floor'",
        "conflict: 8 rules left; trying without constraint 'metro_ceiling'",
        "conflict: 5 rules left; trying without bound 'north'",
        "conflict: 5 rules left; trying without bound 'coast'",
    ]
    assert calls == ["infeasible", "optimal", "optimal", "optimal", "infeasible", "optimal", "optimal", "infeasible"]
    assert c.solves == len(calls)
    monkeypatch.setattr(solver, "solve", real)
    v = check_report(m, conflict_report(m, c))
    assert v.valid, v.failure


@pytest.mark.parametrize("text, said, table", [
    ("minimize: x\nvariables: {x: {lower: 5, upper: 3}}\n",
     "The bounds of the variable 'x' cannot both hold: the lower one is above the upper one; dropping it makes "
     "the rest feasible (checked by 2 exact solves):", ["rule         formula", "bound of x   5 <= x <= 3"]),
    ("minimize: x\nvariables: {x: {}}\nconstraints:\n  r: {terms: {x: 1}, lower: 4, upper: 2}\n",
     "The constraint 'r' cannot hold: its lower side is above its upper side; dropping it makes the rest "
     "feasible (checked by 2 exact solves):", ["rule   formula", "r      4 <= x <= 2"]),
])
def test_conflict_of_one_crossed_item_says_so_without_multipliers(cli, tmp_path, text, said, table):
    # a crossed item's proof is its own two sides: the screen says that, and has no
    # multiplier column (it once showed a multiplier of 0, and "These 1 rules")
    path = tmp_path / "m.yaml"
    path.write_text(text)
    code, out, err = cli("conflict", path)
    assert code == 0 and err == ""
    lines = out.splitlines()
    assert lines[0] == said
    assert "multiplier" not in out and "These" not in out
    assert [ln.strip() for ln in lines[1:6] if ln.strip() and not ln.strip().startswith("─")] == table


def test_conflict_json_of_one_crossed_item_names_it(cli, tmp_path):
    # --json says which item crosses (the screen's sentence), with no multipliers;
    # a conflict of rules has no such key
    path = tmp_path / "m.yaml"
    path.write_text("minimize: x\nvariables: {x: {}}\nconstraints:\n  r: {terms: {x: 1}, lower: 4, upper: 2}\n")
    code, out, err = cli("conflict", path, "--json")
    doc = json.loads(out)
    assert (code, err) == (0, "")
    assert doc["crossed"] == {"kind": "constraint", "name": "r"}
    assert (doc["constraints"], doc["bounds"], doc["multipliers"], doc["bound_multipliers"]) == (["r"], [], {}, {})
    code, out, err = cli("conflict", CASES / "grants_overcommitted.yaml", "--json")
    assert code == 0 and "crossed" not in json.loads(out)


def test_conflict_of_one_rule_that_cannot_hold_alone(cli, tmp_path):
    # a row whose terms are all 0 and whose side is not: one rule, with its multiplier
    path = tmp_path / "m.yaml"
    path.write_text("minimize: x\nvariables: {x: {}}\nconstraints:\n  r: {terms: {x: 0}, lower: 4}\n")
    code, out, err = cli("conflict", path)
    assert code == 0 and err == ""
    lines = [ln.strip() for ln in out.splitlines() if ln.strip() and not ln.strip().startswith("─")]
    assert lines[:3] == [
        "This rule cannot hold by itself; dropping it makes the rest feasible (checked by 3 exact solves):",
        "rule   multiplier   formula", "r               1   0 >= 4"]


def test_conflict_of_a_feasible_model_is_refused():
    with pytest.raises(exactlp.InputError) as exc:
        conflict(exactlp.load(CASES / "grants.yaml"))
    assert str(exc.value) == (f"{CASES / 'grants.yaml'}: the model is optimal: only an infeasible model has a "
                              "conflict to explain ('exactlp sensitivity' and 'exactlp ranges' apply)")
    # a model made in code has no file: the field says what is meant
    with pytest.raises(exactlp.InputError) as exc:
        conflict(replace(model_from_text("maximize: x\nvariables:\n  x: {upper: 2}\n"), source=None))
    assert str(exc.value) == ("model: the model is optimal: only an infeasible model has a conflict to explain "
                              "('exactlp sensitivity' and 'exactlp ranges' apply)")


def _number_leaves(doc) -> int:
    if isinstance(doc, dict):
        return sum(_number_leaves(v) for v in doc.values())
    if isinstance(doc, list):
        return sum(_number_leaves(v) for v in doc)
    if isinstance(doc, str):
        try:
            parse_number(doc, _REPORT_LIMITS)
        except exactlp.InputError:
            return 0
        return 1
    return 0


def test_a_sensitivity_report_holds_the_numbers_its_size_says():
    # the optimal certificate (2 (n + m) + 2) and the objective, then each range's
    # two ends, its direction, and a limit's value and dual; an infinite end is
    # null, not a number, so the count is the size less those
    from exactlp.reports import sensitivity_report, sensitivity_report_size

    for case in ("grants.yaml", "drought.yaml", "berth.yaml"):
        m = exactlp.load(CASES / case)
        sens = sensitivity(m)
        doc = sensitivity_report(m, sens)
        infinite = sum(end is None for iv in (*sens.objective_ranges.values(),
                                              *(rr.interval for rr in sens.rhs_ranges.values()))
                       for end in (iv.lower, iv.upper))
        assert _number_leaves(doc) == sensitivity_report_size(sens)[0] - infinite
    sens = sensitivity(exactlp.load(CASES / "grants.yaml"))
    # 5 variables, 3 constraints: 2 * 8 + 3, then 5 * 2 ends and one direction
    # entry (coast_west's), 3 * 4 and one (fund's)
    assert sensitivity_report_size(sens)[0] == 19 + 11 + 13 == 43


def test_a_conflict_report_holds_the_numbers_its_size_says():
    # the subset's Farkas multipliers and their right-hand side (or a crossed
    # item's two sides), and a point per member over every variable
    from exactlp.reports import conflict_report, conflict_report_size

    from .models import KNOWN

    cases = [(k[0], model_from_text(k[1])) for k in KNOWN if k[2] == "infeasible"]
    cases.append(("grants_overcommitted", exactlp.load(CASES / "grants_overcommitted.yaml")))
    sizes = {}
    for name, m in cases:
        c = conflict(m)
        assert _number_leaves(conflict_report(m, c)) == conflict_report_size(c)[0], name
        sizes[name] = conflict_report_size(c)[0]
    # 5 multipliers and the right-hand side, then 5 members' points over 4 variables
    assert sizes["grants_overcommitted"] == 6 + 5 * 4 == 26
    assert sizes["crossed-bounds"] == sizes["crossed-row"] == 3


def _number_chars(doc) -> int:
    if isinstance(doc, dict):
        return sum(_number_chars(v) for v in doc.values())
    if isinstance(doc, str) and _number_leaves(doc):
        return len(doc)
    return 0


def test_the_digits_a_report_will_hold_are_known_before_it_is_written():
    # from the values' bit lengths; on long numbers within a few per cent of the
    # characters the numbers take written out (the chain's run to 500 digits)
    from exactlp.analysis import ranges
    from exactlp.reports import ranges_report, ranges_report_size, sensitivity_report, sensitivity_report_size

    m = _chain(130)
    sens = sensitivity(m)
    numbers, digits = sensitivity_report_size(sens)
    written = _number_chars(sensitivity_report(m, sens))
    assert 0.97 * written < digits < 1.03 * written
    for text in (ALTERNATIVE, UNBOUNDED_SET):  # (the second has an end without limit: null)
        model = model_from_text(text)
        rg = ranges(model)
        infinite = sum(end is None for v in rg.ranges.values() for end in (v.minimum, v.maximum))
        assert _number_leaves(ranges_report(model, rg)) == ranges_report_size(rg)[0] - infinite


def test_a_sensitivity_report_past_the_limit_is_refused_before_anything_is_written(cli, tmp_path, monkeypatch):
    # grants.yaml's report holds 43 numbers
    import exactlp.limits

    out = tmp_path / "r.yaml"
    from exactlp.reports import sensitivity_report_size

    digits = sensitivity_report_size(sensitivity(exactlp.load(CASES / "grants.yaml")))[1]
    for limits in (dict(max_report_numbers=42), dict(max_report_digits=digits - 1)):
        monkeypatch.setattr(exactlp.limits, "DEFAULT_LIMITS", exactlp.limits.Limits(**limits))
        code, stdout, err = cli("sensitivity", CASES / "grants.yaml", "-o", out)
        assert (code, stdout) == (2, "") and not out.exists() and list(tmp_path.iterdir()) == []
        lim = exactlp.limits.DEFAULT_LIMITS
        assert err == (f"exactlp: {CASES / 'grants.yaml'}: --output: a sensitivity report of this model (5 variables, "
                       f"3 constraints) would hold 43 exact numbers of about {digits} digits in all; the limits are "
                       f"{lim.max_report_numbers:,} numbers and {lim.max_report_digits:,} digits "
                       "(without --output, the screen and --json print the claims unchecked)\n")
    monkeypatch.setattr(exactlp.limits, "DEFAULT_LIMITS", exactlp.limits.Limits(max_report_numbers=43,
                                                                                max_report_digits=digits))
    code, _, err = cli("sensitivity", CASES / "grants.yaml", "-o", out)
    assert (code, err) == (0, "") and out.exists()
    out.unlink()
    monkeypatch.setattr(exactlp.limits, "DEFAULT_LIMITS", exactlp.limits.Limits(max_report_digits=10))
    code, stdout, err = cli("ranges", CASES / "grants.yaml", "-o", out)
    assert (code, stdout) == (2, "") and not out.exists()
    assert err.startswith(f"exactlp: {CASES / 'grants.yaml'}: --output: a ranges report of this model (5 variables, "
                          "3 constraints) would hold ")


CHECKED = ("Check: every claim was re-derived from the model by the independent report check, the one "
           "`exactlp verify` runs on a report written with -o.")
SKIPPED = ("Check: skipped (--no-check); the claims are exact but were not re-derived by the independent report "
           "check.")
TOO_LARGE = ("Check: not done, as the proofs would be past the report limits; the claims are exact but were not "
             "re-derived by the independent report check.")


@pytest.mark.parametrize("command, case", [("sensitivity", "grants"), ("ranges", "grants"),
                                           ("conflict", "grants_overcommitted")])
def test_an_analysis_checks_its_claims_before_printing_them_unless_told_not_to(cli, monkeypatch, command, case):
    # as solve verifies its certificate: the report's proofs are built and put
    # through the independent check (once, and the report of that kind), with
    # or without -o; --no-check skips it, and the screen and --json say which
    import exactlp.report_check as rc

    seen = []
    real = rc.check_report

    def recorded(model, report):
        seen.append(report["report"])
        return real(model, report)

    monkeypatch.setattr(rc, "check_report", recorded)
    path = CASES / f"{case}.yaml"
    code, out, err = cli(command, path)
    assert (code, err, seen) == (0, "", [command])
    lines = out.rstrip("\n").split("\n")
    assert lines[-2:] == [CHECKED, exactlp.render.CAUTION]
    code, out, err = cli(command, path, "--no-check")
    assert (code, err, seen) == (0, "", [command])
    assert out.rstrip("\n").split("\n") == lines[:-2] + [SKIPPED, exactlp.render.CAUTION]
    assert json.loads(cli(command, path, "--json")[1])["check"] == "checked" and seen == [command] * 2
    assert json.loads(cli(command, path, "--json", "--no-check")[1])["check"] == "skipped" and len(seen) == 2


@pytest.mark.parametrize("command, case, claim, size", [
    ("sensitivity", "grants", "Raising the fund limit by 1 raises the objective by 79/10",
     "5 variables, 3 constraints) would hold 43 exact numbers of about 96"),
    ("ranges", "grants", "  coast_west   61/20      61/20   unique optimum",
     "5 variables, 3 constraints) would hold 30 exact numbers of about 108"),
    ("conflict", "grants_overcommitted", "  uplands_floor             1   uplands >= 3/2",
     "4 variables, 4 constraints) would hold 26 exact numbers of about 62"),
])
def test_an_analysis_whose_proofs_are_past_the_limits_prints_its_claims_unchecked(cli, monkeypatch, tmp_path, command,
                                                                                   case, claim, size):
    # the limits guard what a report may hold; on the screen, without -o, the
    # claims are still printed, and the check line says they were not re-derived
    # (a conflict report holds a point per member over every variable: it grows
    # with the members times the variables, and is limited as the others are)
    import exactlp.limits

    path = CASES / f"{case}.yaml"
    assert cli(command, path)[1].rstrip("\n").split("\n")[-2] == CHECKED
    monkeypatch.setattr(exactlp.limits, "DEFAULT_LIMITS", exactlp.limits.Limits(max_report_numbers=20))
    code, out, err = cli(command, path)
    assert (code, err) == (0, "") and out.rstrip("\n").split("\n")[-2] == TOO_LARGE
    assert claim in out
    assert json.loads(cli(command, path, "--json")[1])["check"] == "too large"
    # with -o the report itself would be past the limits: refused, and no file left
    code, out, err = cli(command, path, "-o", tmp_path / "report.yaml")
    assert (code, out) == (2, "") and list(tmp_path.iterdir()) == []
    assert err == (f"exactlp: {path}: --output: a {command} report of this model ({size} digits in all; the limits "
                   "are 20 numbers and 100,000,000 digits (without --output, the screen and --json print the claims "
                   "unchecked)\n")


def test_an_analysis_whose_own_proofs_fail_their_check_prints_no_result(cli, monkeypatch):
    # a proof of ours that the independent check refuses is our bug: one line,
    # the internal-error status, and none of the claims on the screen
    import exactlp.report_check as rc
    from exactlp.verifier import Check, Verification

    monkeypatch.setattr(rc, "check_report", lambda model, report: Verification(
        False, None, (Check("report", False, "rhs_ranges.fund.upper: planted fault"),)))
    code, out, err = cli("sensitivity", CASES / "grants.yaml")
    assert (code, out) == (4, "")
    assert err == ("exactlp: internal error: RuntimeError: the report failed its check: rhs_ranges.fund.upper: "
                   "planted fault (run again with --debug for the traceback)\n")


def test_cli_sensitivity_and_conflict_json(cli):
    code, out, _ = cli("sensitivity", CASES / "grants.yaml", "--json")
    doc = json.loads(out)
    assert code == 0
    assert doc["objective_ranges"]["north"] == {"lower": "79/10", "upper": None}
    assert doc["rhs_ranges"]["fund"] == {"lower": "12", "upper": "259/20", "dual": "79/10", "bound": "upper", "value": "25/2"}
    code, out, _ = cli("conflict", CASES / "grants_overcommitted.yaml", "--json")
    doc = json.loads(out)
    assert code == 0 and doc["constraints"] == ["fund", "uplands_floor", "metro_floor"] and doc["bounds"] == ["north", "coast"]
    code, out, _ = cli("sensitivity", CASES / "grants.yaml")
    assert "Raising the fund limit by 1 raises the objective by 79/10, valid while the limit stays within [12, 259/20]." in out
    code, out, err = cli("conflict", CASES / "grants.yaml")
    assert code == 2 and err == (f"exactlp: {CASES / 'grants.yaml'}: the model is optimal: only an infeasible model "
                                 "has a conflict to explain ('exactlp sensitivity' and 'exactlp ranges' apply)\n")


@pytest.mark.parametrize("command, case, expect", [
    ("sensitivity", "grants_overcommitted.yaml",
     "the model is infeasible: sensitivity ranging needs an optimum ('exactlp conflict' names a minimal set of "
     "rules that clash)"),
    ("ranges", "grants_overcommitted.yaml",
     "the model is infeasible: allocation ranges need an optimum ('exactlp conflict' names a minimal set of "
     "rules that clash)"),
    ("sensitivity", "pipeline_forgotten_cap.yaml",
     "the model is unbounded: sensitivity ranging needs an optimum (the solve's certificate gives the improving ray)"),
    ("ranges", "pipeline_forgotten_cap.yaml",
     "the model is unbounded: allocation ranges need an optimum (the solve's certificate gives the improving ray)"),
])
def test_analysis_of_a_model_without_an_optimum_names_the_file_and_what_to_do(cli, command, case, expect):
    code, out, err = cli(command, CASES / case)
    assert (code, out, err) == (2, "", f"exactlp: {CASES / case}: {expect}\n")


def test_the_analyses_say_what_they_are_doing_before_each_exact_solve():
    # the command line shows these lines on a terminal while the solves run
    said: list[str] = []
    rg = exactlp.analysis.ranges(model_from_text(ALTERNATIVE), progress=said.append)
    assert said == ["ranges: 'x', 1 of 2 to solve (two exact solves each)",
                    "ranges: 'y', 2 of 2 to solve (two exact solves each)"]
    assert rg.solves == 5
    said.clear()
    sensitivity(exactlp.load(CASES / "grants.yaml"), progress=said.append)
    assert said == [f"sensitivity: column {k} of 3 of the basis inverse" for k in range(1, 4)] + [
        f"sensitivity: objective coefficient {k} of 5" for k in range(1, 6)] + [
        f"sensitivity: constraint limit {k} of 3" for k in range(1, 4)]
    said.clear()
    c = conflict(exactlp.load(CASES / "grants_overcommitted.yaml"), progress=said.append)
    assert said == [f"conflict: 5 rules left; trying without {kind} '{name}'" for kind, name in (
        ("constraint", "fund"), ("constraint", "uplands_floor"), ("constraint", "metro_floor"),
        ("bound", "north"), ("bound", "coast"))]
    assert c.solves == 7


ALTERNATIVE = "maximize: x + y\nvariables: {x: {upper: 3}, y: {upper: 3}}\nconstraints:\n  cap: x + y <= 4\n"


def test_alternative_optima_by_hand():
    # every point of x + y = 4 with 1 <= x <= 3 is optimal (objective 4): x and y range over [1, 3]
    from exactlp.analysis import ranges

    rg = ranges(model_from_text(ALTERNATIVE))
    assert rg.unique is False
    assert {k: (v.minimum, v.maximum) for k, v in rg.ranges.items()} == {"x": (F(1), F(3)), "y": (F(1), F(3))}
    for name, ends in rg.endpoints.items():  # each end carries a certificate the verifier accepts
        for probe, result in ends:
            assert exactlp.verify(probe, exactlp.build_certificate(probe, result)).valid
    # the probes hold the objective exactly at its optimum
    row = rg.fixed_model.constraints[-1]
    assert (row.name, row.terms, row.lower, row.upper) == ("optimal_objective", (("x", F(1)), ("y", F(1))), F(4), F(4))


def test_range_probes_start_from_the_proven_optimal_basis():
    # Each probe (one variable minimised or maximised with the objective held at
    # its optimum) starts from the parent's exact optimal basis plus the new row's
    # logical, which is feasible for every probe: the start is accepted, no float
    # solve is made, and the ends equal those of probes solved from scratch.
    from exactlp.analysis import ranges

    m = model_from_text(ALTERNATIVE)
    rg = ranges(m, warm_start=False)
    parent = rg.result
    n, rows = len(m.variables), len(m.constraints)
    for name, ends in rg.endpoints.items():
        for probe, result in ends:
            assert result.warm_start == "accepted: the suggested basis is exactly primal feasible"
            fresh = exactlp.solve(probe, warm_start=False)
            assert fresh.warm_start == "off" and result.objective == fresh.objective
            assert exactlp.verify(probe, exactlp.build_certificate(probe, result)).valid
    # the start handed to the probes: the parent's basis, and the held row's logical
    from exactlp.floatlp import BasisHint

    hint = BasisHint.of_result(parent, n, rows, added_rows=1)
    assert hint.basic == tuple(parent.basis_columns) + (n + rows,)
    assert hint.at_upper == frozenset(parent.at_upper_columns) and hint.float_status == "exact"


def test_unique_optimum_by_reduced_costs():
    from exactlp.analysis import ranges

    rg = ranges(model_from_text(ALTERNATIVE.replace("maximize: x + y", "maximize: 2 x + y")))
    assert rg.unique is True and rg.solves == 1
    assert rg.proof.startswith("every nonbasic column has a nonzero reduced cost")
    assert {k: (v.minimum, v.maximum) for k, v in rg.ranges.items()} == {"x": (F(3), F(3)), "y": (F(1), F(1))}


def test_cli_ranges_json(cli, write):
    path = write("alt.yaml", ALTERNATIVE)
    code, out, _ = cli("ranges", path, "--json")
    doc = json.loads(out)
    assert code == 0 and doc["unique"] is False
    assert doc["ranges"]["x"] == {"min": "1", "max": "3", "method": "solved"}
    code, out, _ = cli("ranges", CASES / "berth.yaml", "a_container")
    assert code == 0 and "is unique" in out
    code, out, err = cli("ranges", path, "z")
    assert code == 2 and err == "exactlp: variables: no variable 'z'\n"



def test_a_misspelt_variable_is_refused_before_the_model_is_solved(monkeypatch):
    # a name is checked at once: the solve before it can take minutes at scale
    import exactlp.solver
    from exactlp.analysis import ranges
    from exactlp.errors import InputError

    def no_solve(*args, **kwargs):
        raise AssertionError("the model was solved before the names were checked")

    m = exactlp.load(CASES / "grants.yaml")
    monkeypatch.setattr(exactlp.solver, "solve", no_solve)
    with pytest.raises(InputError) as err:
        ranges(m, ["north", "metr"])
    assert str(err.value) == "variables: no variable 'metr' (did you mean 'metro'?)"

# --- reports: every claim carries its proof, and tampering is caught --------------------------
def _conflict_report():
    from exactlp.reports import conflict_report

    m = exactlp.load(CASES / "grants_overcommitted.yaml")
    return m, conflict_report(m, conflict(m))


def _ranges_report(text=ALTERNATIVE):
    from exactlp.analysis import ranges
    from exactlp.reports import ranges_report

    m = model_from_text(text)
    return m, ranges_report(m, ranges(m))


def test_reports_check_and_round_trip():
    from exactlp.certificate import dump_certificate, parse_certificate_text
    from exactlp.report_check import check_report

    for m, rep in (_conflict_report(), _ranges_report(), _ranges_report(ALTERNATIVE.replace("x + y", "2 x + y", 1))):
        back = parse_certificate_text(dump_certificate(rep), "<report>")
        v = check_report(m, back)
        assert v.valid, v.failure


def test_conflict_report_tampering_is_caught():
    import copy

    from exactlp.report_check import check_report

    m, rep = _conflict_report()
    bad = copy.deepcopy(rep)
    bad["minimality"] = bad["minimality"][1:]  # one member's necessity left unproven
    assert check_report(m, bad).failure.detail == (
        "minimality: no point shows that dropping constraint 'fund' leaves a feasible set")
    bad = copy.deepcopy(rep)
    bad["minimality"][0]["point"]["north"] = "100"  # the point no longer satisfies the others
    assert "minimality: dropping constraint 'fund': 'north' = 100 breaks its bounds" == check_report(m, bad).failure.detail
    bad = copy.deepcopy(rep)
    bad["constraints"] = ["fund", "uplands_floor"]  # a smaller set that is not infeasible
    assert not check_report(m, bad).valid


def test_the_conflict_check_holds_points_on_their_limits_and_refuses_past_them():
    # Any feasible witness will do, so a point may sit exactly on a side: dropping
    # 'uplands_floor', (4, 4, 0, 2) fills the fund (10 of 10) and meets metro_floor
    # (2 >= 2) and the bounds of north and coast exactly as the members kept ask
    import copy

    from exactlp.report_check import check_report

    m, rep = _conflict_report()
    tight = copy.deepcopy(rep)
    tight["minimality"][1]["point"] = {"north": "4", "coast": "4", "uplands": "0", "metro": "2"}
    assert tight["minimality"][1]["drop"] == {"kind": "constraint", "name": "uplands_floor"}
    v = check_report(m, tight)
    assert v.valid, v.failure
    assert [(c.name, c.ok, c.detail) for c in v.checks][1:] == [
        ("the conflict is infeasible", True, "certificate valid (infeasible)"),
        ("minimal", True, "each of the 5 members is needed")]
    for point, problem in (
        ({"north": "4", "coast": "4", "uplands": "0", "metro": "2001/1000"},
         "constraint 'fund' fails at the point (10001/1000)"),
        ({"north": "34/10", "coast": "4", "uplands": "0", "metro": "2"}, "'north' = 17/5 breaks its bounds"),
    ):
        bad = copy.deepcopy(tight)
        bad["minimality"][1]["point"] = point
        assert check_report(m, bad).failure.detail == f"minimality: dropping constraint 'uplands_floor': {problem}"
    for change, detail in (
        (lambda r: r.update(constraints=["fund", "no_such_rule"]),
         "the report names constraints or variables the model does not have"),
        (lambda r: r.update(constraints="fund"), "constraints: expected a list, found 'fund'"),
    ):
        bad = copy.deepcopy(rep)
        change(bad)
        assert check_report(m, bad).failure.detail == detail


def test_the_rank_test_behind_unique_optima():
    # modulo the prime p a full rank is a full rank; a rank lost modulo p (p divides
    # a nonzero minor) is settled in fractions; a singular system is singular either way
    from exactlp.report_check import _PRIME, _full_rank, _full_rank_mod

    assert _full_rank([{"x": F(_PRIME)}], ["x"]) is True
    assert (_full_rank_mod([{"x": F(_PRIME)}], ["x"]), _full_rank_mod([{"x": F(_PRIME)}], ["x"], None)) == (False, True)
    twice = [{"x": F(2), "y": F(1)}, {"x": F(4), "y": F(2)}]  # the second row is twice the first
    assert (_full_rank_mod(twice, ["x", "y"]), _full_rank_mod(twice, ["x", "y"], None)) == (False, False)
    halves = [{"x": F(1, 2), "y": F(1, 3)}, {"x": F(1, 4), "y": F(-1, 3)}]  # det = -1/6 - 1/12 = -1/4
    assert (_full_rank_mod(halves, ["x", "y"]), _full_rank_mod(halves, ["x", "y"], None)) == (True, True)
    # the third row is the first less the second: eliminating x puts y into the
    # second row (fill-in), which must then meet the third
    fill = [{"x": F(1), "y": F(1)}, {"x": F(1), "z": F(1)}, {"y": F(1), "z": F(-1)}]
    assert (_full_rank_mod(fill, ["x", "y", "z"]), _full_rank_mod(fill, ["x", "y", "z"], None)) == (False, False)
    fill[2]["z"] = F(1)  # det = -2: now full rank
    assert (_full_rank_mod(fill, ["x", "y", "z"]), _full_rank_mod(fill, ["x", "y", "z"], None)) == (True, True)
    # fractions made whole row by row (times 6 and times 3): still twice the same row
    thirds = [{"x": F(1, 2), "y": F(1, 3)}, {"x": F(1), "y": F(2, 3)}]
    assert (_full_rank_mod(thirds, ["x", "y"]), _full_rank_mod(thirds, ["x", "y"], None)) == (False, False)


def test_a_ranges_report_may_not_call_a_unique_optimum_open():
    # the three-resource example's optimum (2, 0, 1) is unique: every range has zero width
    from exactlp.analysis import ranges
    from exactlp.reports import ranges_report
    from exactlp.report_check import check_report

    from .models import KNOWN

    m = model_from_text(KNOWN[0][1])
    rep = ranges_report(m, ranges(m))
    v = check_report(m, rep)
    assert rep["unique"] is True and v.valid
    assert (v.checks[-1].name, v.checks[-1].ok, v.checks[-1].detail) == (
        "ranges", True, "3 variables' ranges over the optimal set re-derived")
    for said in (False, "false"):
        rep["unique"] = said
        assert check_report(m, rep).failure.detail == "unique: every range has zero width, so the optimum is unique"
    rep["unique"] = True
    rep["ranges"]["x2"]["method"] = "fixed bounds"  # x2 is at 0 by its reduced cost, not fixed
    assert check_report(m, rep).failure.detail == "ranges.x2: the variable is not fixed at 0"
    # a fixed variable is one of the equations that pin the optimum: x by its
    # reduced cost, y by its bounds, so the optimum is unique with only x ranged
    m = model_from_text("maximize: x\nvariables: {x: {upper: 3}, y: {fixed: 1}}\n")
    rep = ranges_report(m, ranges(m, ["x"]))
    assert (rep["unique"], list(rep["ranges"])) == (True, ["x"]) and check_report(m, rep).valid


def test_the_conflict_check_sums_fractional_coefficients_exactly():
    # 1/2 a + 1/3 b >= 1 with a, b <= 1 reaches 5/6 at most: infeasible, and each
    # member is needed; the witnesses meet the row exactly (1/2 * 2 = 1 when a's
    # bound is dropped), so a fault in the fractional sums would refuse them
    from exactlp.reports import conflict_report
    from exactlp.report_check import check_report

    m = model_from_text("minimize: 0\nvariables: {a: {upper: 1}, b: {upper: 1}}\nconstraints:\n"
                        "  need: 1/2 a + 1/3 b >= 1\n")
    rep = conflict_report(m, conflict(m))
    assert (rep["constraints"], rep["bounds"]) == (["need"], ["a", "b"])
    v = check_report(m, rep)
    assert v.valid, v.failure


def test_conflict_report_with_values_of_the_wrong_kind_is_refused_by_name():
    # a point's value or a drop's name that is not text is refused as such (a list
    # there was an internal error, a TypeError, before)
    import copy

    from exactlp.report_check import check_report

    m, rep = _conflict_report()
    bad = copy.deepcopy(rep)
    bad["minimality"][0]["point"]["north"] = [1]
    assert check_report(m, bad).failure.detail == "minimality: dropping constraint 'fund': point.north is not an exact number"
    bad = copy.deepcopy(rep)
    bad["minimality"][0]["drop"]["name"] = ["fund"]
    assert check_report(m, bad).failure.detail == (
        "minimality: a drop's kind and name must be text, found 'constraint' and ['fund']")


def test_every_leaf_of_a_report_replaced_by_the_wrong_kind_gives_a_verdict():
    # each leaf of a conflict, a ranges and a sensitivity report replaced in turn
    # by a list, a mapping, a null, a number, a boolean and a word: the check
    # answers (valid or not) and never raises
    import copy

    from exactlp.analysis import ranges
    from exactlp.report_check import check_report
    from exactlp.reports import ranges_report, sensitivity_report

    m, rep = _conflict_report()
    berth = exactlp.load(CASES / "berth.yaml")
    cases = [(m, rep), (berth, ranges_report(berth, ranges(berth))),
             (berth, sensitivity_report(berth, sensitivity(berth)))]

    from .helpers import leaf_paths

    tried = 0
    for model, report in cases:
        assert check_report(model, report).valid
        for path in leaf_paths(report):
            for value in ([1], {}, None, 5, True, "x"):
                bad = copy.deepcopy(report)
                at = bad
                for key in path[:-1]:
                    at = at[key]
                at[path[-1]] = value
                assert type(check_report(model, bad).valid) is bool
                tried += 1
    assert tried > 1000


def test_ranges_report_tampering_is_caught():
    import copy

    from exactlp.report_check import check_report

    m, rep = _ranges_report()
    bad = copy.deepcopy(rep)
    bad["ranges"]["x"]["max"] = "5/2"
    assert check_report(m, bad).failure.detail == "ranges.x.max: the proof gives 3, the report 5/2"
    bad = copy.deepcopy(rep)
    bad["unique"] = True
    assert check_report(m, bad).failure.detail == "unique: neither the duals nor the ranges prove the optimum unique"
    bad = copy.deepcopy(rep)
    bad["ranges"]["x"]["method"] = "unique optimum"
    assert check_report(m, bad).failure.detail == "ranges.x: the optimum is not shown to be unique"
    m2, rep2 = _ranges_report(ALTERNATIVE.replace("x + y", "2 x + y", 1))
    bad = copy.deepcopy(rep2)
    bad["ranges"]["x"]["min"] = "2"
    assert check_report(m2, bad).failure.detail == "ranges.x: not decided by a nonzero reduced cost at a bound"


def test_cli_writes_and_verifies_reports(cli, tmp_path):
    report = tmp_path / "conflict.yaml"
    code, _, _ = cli("conflict", CASES / "grants_overcommitted.yaml", "-o", report)
    assert code == 0
    code, out, _ = cli("verify", CASES / "grants_overcommitted.yaml", report)
    assert code == 0
    assert f"valid: {report} proves a minimal conflict of {CASES / 'grants_overcommitted.yaml'}" in out
    code, out, _ = cli("verify", CASES / "grants.yaml", report)
    assert code == 1 and "FAIL  report: fingerprint:" in out
    report = tmp_path / "ranges.json"
    code, _, _ = cli("ranges", CASES / "berth.yaml", "-o", report)
    assert code == 0 and report.read_text().lstrip().startswith("{")
    code, out, _ = cli("verify", CASES / "berth.yaml", report)
    assert code == 0 and "proves its ranges over the optimal set" in out


def test_ranges_on_a_1000_row_network_from_the_command_line_to_its_verified_report(cli, tmp_path):
    # The generated network at 1,000 rows (400 sources, 600 districts, reach 40:
    # 6,428 pipes), the scale at which ranges once claimed a wrong maximum:
    # p_0_176 ranged before p_0_311 gave p_0_311 a maximum of 24 (numpy's row
    # function, handed between probes on the held row's model, read another
    # probe's basis; test_probes_by_numpy_rows_are_the_solves_from_their_own covers that path, which
    # the face's probes here no longer reach).  Each range is checked against
    # scipy's HiGHS (float, within its tolerance) minimising and maximising the
    # variable with the objective held at the proven optimum; the report passes
    # `verify`, and the screen shows the report's values.
    import yaml

    from exactlp.analysis import fixed_objective_model

    from .helpers import network_text

    path, report = tmp_path / "network.yaml", tmp_path / "network.ranges.yaml"
    path.write_text(network_text(400, 600, reach=40))
    m = exactlp.load(path)
    assert (len(m.constraints), len(m.variables)) == (1000, 6428)
    names = ["p_0_176", "p_0_311", "p_2_2"]
    code, out, err = cli("ranges", path, *names, "-o", report)
    assert code == 0, err
    doc = yaml.safe_load(report.read_text())
    code, vout, _ = cli("verify", path, report)
    assert code == 0 and f"valid: {report} proves its ranges over the optimal set" in vout
    z = parse_number(doc["objective"])
    held = fixed_objective_model(m, z)
    for name, sense, key in (("p_0_176", "minimize", "min"), ("p_0_176", "maximize", "max"),
                             ("p_0_311", "maximize", "max")):  # (about 5 s each: the held row is dense)
        probe = replace(held, sense=exactlp.model.Sense(sense), objective=((name, F(1)),), objective_constant=F(0))
        status, got = scipy_solve(probe)
        want = parse_number(doc["ranges"][name][key])
        assert status == "optimal" and abs(got - float(want)) <= 1e-6 * max(1.0, abs(got)), (name, sense, got, want)
    for name in names:
        entry = doc["ranges"][name]
        shown = next(line.split() for line in out.splitlines() if line.split()[:1] == [name])
        assert shown[1:3] == [entry["min"], entry["max"]]
    assert {n: doc["ranges"][n]["method"] for n in names} == {
        "p_0_176": "solved", "p_0_311": "solved", "p_2_2": "reduced cost"}


from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

from .strategies import lp_models  # noqa: E402


@settings(max_examples=150, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(lp_models(max_vars=4, max_rows=4))
def test_every_report_on_random_models_passes_its_own_check(model):
    # Every range end, uniqueness verdict and conflict member is re-proven by the
    # independent checker: a wrong range or a non-minimal conflict fails here.
    from exactlp.analysis import ranges
    from exactlp.report_check import check_report
    from exactlp.reports import conflict_report, ranges_report, sensitivity_report

    status = exactlp.solve(model).status.value
    if status == "optimal":
        for rep in (sensitivity_report(model, sensitivity(model)), ranges_report(model, ranges(model))):
            v = check_report(model, rep)
            assert v.valid, v.failure
    elif status == "infeasible":
        v = check_report(model, conflict_report(model, conflict(model)))
        assert v.valid, v.failure


def _ranged(s):
    return (s.objective_ranges, s.rhs_ranges, s.dual_directions)


def _sensitivity_summed(model, how, monkeypatch):
    # "rows": each basic column's tableau row summed over the rows of B^-1 it
    # reaches (models under 20,000 nonzeros); "numpy": by the pivot loop's numpy
    # sums (wide models), here for every model; "limbs": the same in limbs of
    # 3 bits, as for integers past 64 bits (D6CUBE's longer rows)
    from exactlp.solver import rows as rows_module

    with monkeypatch.context() as mp:
        if how != "rows":
            mp.setattr(rows_module, "NUMPY_ROW_NONZEROS", 0)
        if how == "limbs":
            mp.setattr(rows_module, "ROW_LIMB_BITS", 3)
            mp.setattr(rows_module, "ROW_LIMBS_MOST", 10**6)
        return sensitivity(model)


@settings(max_examples=120, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(lp_models(max_vars=5, max_rows=4))
def test_sensitivity_by_numpy_sums_is_the_sensitivity_by_rows(monkeypatch, model):
    # the same ranges and dual directions, as Fractions, whichever way the rows
    # are summed; and the report of each passes the independent check
    from exactlp.report_check import check_report
    from exactlp.reports import sensitivity_report

    if exactlp.solve(model).status.value != "optimal":
        return
    by_rows = _sensitivity_summed(model, "rows", monkeypatch)
    for how in ("numpy", "limbs"):
        got = _sensitivity_summed(model, how, monkeypatch)
        assert _ranged(got) == _ranged(by_rows), how
        for iv in got.objective_ranges.values():
            assert all(type(e) is F for e in (iv.lower, iv.upper) if e is not None)
    v = check_report(model, sensitivity_report(model, by_rows))
    assert v.valid, v.failure


@pytest.mark.parametrize("basis, text", [
    (lambda cols, free: cols[:-1], "the optimal basis just proven (4 columns for 5 rows) could not be rebuilt"),
    (lambda cols, free: cols[:-1] + (free,), "the optimal basis just proven (5 columns for 5 rows) could not be rebuilt"),
])
def test_sensitivity_refuses_a_basis_it_cannot_rebuild_as_its_own_fault(basis, text, monkeypatch):
    # the solve's optimal basis is refactored exactly, with no repair: one that
    # does not rebuild (a column short, or one swapped for a nonbasic column that
    # leaves it infeasible) is the program's fault, not the model's: a
    # RuntimeError, which the command line reports as an internal error (exit 4)
    import dataclasses

    from exactlp import analysis, solver

    model = exactlp.load(CASES / "emissions.yaml")
    real = solver.solve

    def solved(m, **options):
        r = real(m, **options)
        free = min(set(range(len(m.variables) + len(m.constraints))) - set(r.basis_columns))
        return dataclasses.replace(r, basis_columns=basis(r.basis_columns, free))
    monkeypatch.setattr(solver, "solve", solved)
    with pytest.raises(RuntimeError) as got:
        analysis.sensitivity(model)
    assert str(got.value) == text


def test_the_analyses_results_are_frozen():
    # each analysis returns values that cannot be changed after the fact, as the
    # solver's results and the verifier's verdicts cannot: every field read-only
    import dataclasses

    from exactlp.analysis import conflict, ranges, sensitivity

    s = sensitivity(exactlp.load(CASES / "emissions.yaml"))
    rg = ranges(model_from_text(ALTERNATIVE))
    c = conflict(exactlp.load(CASES / "grants_overcommitted.yaml"))
    made = [s, next(iter(s.objective_ranges.values())), next(iter(s.rhs_ranges.values())),
            rg, next(iter(rg.ranges.values())), c, s.result]
    assert [type(v).__name__ for v in made] == ["Sensitivity", "Interval", "RhsRange", "Ranges", "VarRange",
                                                 "Conflict", "SolveResult"]
    for value in made:
        for f in dataclasses.fields(value):
            with pytest.raises(dataclasses.FrozenInstanceError):
                setattr(value, f.name, None)


def test_sensitivity_says_each_stage_about_a_hundred_times_at_most():
    # one line per column of the basis inverse, objective coefficient and
    # constraint limit on a small model; every (n + m) // 100-th on a larger one
    # (the water network: 252 variables and 54 rows, every 3rd, 18 + 84 + 18 lines)
    from exactlp.analysis import sensitivity

    said = []
    sensitivity(exactlp.load(CASES / "emissions.yaml"), progress=said.append)
    assert said == ([f"sensitivity: column {i} of 5 of the basis inverse" for i in range(1, 6)]
                    + [f"sensitivity: objective coefficient {j} of 4" for j in range(1, 5)]
                    + [f"sensitivity: constraint limit {i} of 5" for i in range(1, 6)])
    said = []
    sensitivity(exactlp.load(CASES / "generated" / "water_network.yaml"), progress=said.append)
    assert said == ([f"sensitivity: column {i} of 54 of the basis inverse" for i in range(1, 55, 3)]
                    + [f"sensitivity: objective coefficient {j} of 252" for j in range(1, 253, 3)]
                    + [f"sensitivity: constraint limit {i} of 54" for i in range(1, 55, 3)])


def test_a_slack_rows_range_is_of_its_nearer_side():
    # x rests on its own lower bound 2, so every row is slack and its dual 0: the
    # side ranged is the one nearer the activity 2 (the upper one when the two are
    # as near), free to move until it meets the activity
    from exactlp.analysis import Interval, RhsRange, sensitivity

    m = model_from_text("minimize: x\nvariables: {x: {lower: 2}}\nconstraints:\n  near_low: 0 <= x <= 10\n"
                        "  middle: -6 <= x <= 10\n  near_up: -10 <= x <= 5\n  up_only: x <= 7\n"
                        "  low_only: x >= -1\n")
    assert sensitivity(m).rhs_ranges == {
        "near_low": RhsRange("lower", F(0), Interval(None, F(2)), F(0)),
        "middle": RhsRange("upper", F(10), Interval(F(2), None), F(0)),
        "near_up": RhsRange("upper", F(5), Interval(F(2), None), F(0)),
        "up_only": RhsRange("upper", F(7), Interval(F(2), None), F(0)),
        "low_only": RhsRange("lower", F(-1), Interval(None, F(2)), F(0)),
    }


# Models whose tableau rows put several limits on one side, each with its exact
# coefficient ranges (found by hand: the least |d_k / alpha_pk| of each side).
NEAREST_LIMITS = [
    # x basic at 1, y at its upper bound 3 with reduced cost 0, w at its lower
    # bound 0 with reduced cost -1 (then -1/1000), the row at its limit 4: in x's
    # row y and w limit the same side, y at 0, so c_x may fall by 1 and not rise
    # at all (a zero must not be passed over for the nonzero one, however small)
    ("maximize: x + y - 2 w\nvariables: {x: {upper: 3}, y: {upper: 3}, w: {upper: 1}}\n"
     "constraints:\n  cap: x + y - w <= 4\n",
     {"x": (F(0), F(1)), "y": (F(1), None), "w": (None, F(-1))}),
    ("maximize: x + y - 1001/1000 w\nvariables: {x: {upper: 3}, y: {upper: 3}, w: {upper: 1}}\n"
     "constraints:\n  cap: x + y - w <= 4\n",
     {"x": (F(0), F(1)), "y": (F(1), None), "w": (None, F(-1))}),
    # x basic at 4, u and v at their lower bounds with reduced costs -1 and -1/100
    # and tableau entries 1000 and 1: both limit c_x's fall, u the nearer (1/1000
    # against 1/100, though its reduced cost is the larger)
    ("maximize: x + 999 u + 99/100 v\nvariables: {x: {upper: 10}, u: {upper: 1}, v: {upper: 1}}\n"
     "constraints:\n  cap: x + 1000 u + v <= 4\n",
     {"x": (F(999, 1000), None), "u": (None, F(1000)), "v": (None, F(1))}),
    # the same with u's entry 10 and v's reduced cost -1/1000: u, met first, sets
    # the side's best at 1/10, and v's limit (1/1000) is a hundred times smaller;
    # the loop passes over a column only when the bit lengths prove it no nearer
    ("maximize: x + 9 u + 999/1000 v\nvariables: {x: {upper: 10}, u: {upper: 1}, v: {upper: 1}}\n"
     "constraints:\n  cap: x + 10 u + v <= 4\n",
     {"x": (F(999, 1000), None), "u": (None, F(10)), "v": (None, F(1))}),
    # the same with the large entry met last: u's limit 1 comes first, and v's
    # (reduced cost -1 over the entry 1000) is a thousand times nearer
    ("maximize: x + 999 v\nvariables: {x: {upper: 10}, u: {upper: 1}, v: {upper: 1}}\n"
     "constraints:\n  cap: x + u + 1000 v <= 4\n",
     {"x": (F(999, 1000), None), "u": (None, F(1)), "v": (None, F(1000))}),
]


@pytest.mark.parametrize("how", ["rows", "numpy", "limbs"])
@pytest.mark.parametrize("text, want", NEAREST_LIMITS)
def test_the_nearest_limit_of_each_side_is_found(text, want, how, monkeypatch):
    # the same ranges by the rows, numpy's sums and limbs; numpy's sums pick a
    # side's candidates by bit lengths (a zero marked below all), the others try
    # every column
    from exactlp.analysis import Interval
    from exactlp.report_check import check_report
    from exactlp.reports import sensitivity_report

    from exactlp import analysis

    model = model_from_text(text)
    with calls_recorded(analysis, "_limit_candidates", what=lambda got: got) as picked:
        s = _sensitivity_summed(model, how, monkeypatch)
    assert s.objective_ranges == {k: Interval(*v) for k, v in want.items()}
    assert bool(picked) == (how != "rows")  # (x's row, by numpy's sums)
    v = check_report(model, sensitivity_report(model, s))
    assert v.valid, v.failure

FREE_AT_ZERO = """
minimize: x2 + 2 x3
variables:
  x0: free
  x1: {lower: 0, upper: 10}
  x2: {lower: 0, upper: 10}
  x3: {lower: 0, upper: 10}
constraints:
  r0: x0 + 2 x1 >= 2
  r1: 2 x0 + 2 x2 - x3 <= 2
  r2: -x0 + 2 x1 + 2 x3 <= 2
"""


def test_a_free_column_at_zero_holds_a_basic_cost_where_it_is(monkeypatch):
    # x0 is free and nonbasic at 0 with d = 0, and x1 (basic in r0) has it in its
    # tableau row: any change of x1's cost gives x0 a nonzero reduced cost, which
    # a free column cannot have at an optimum, so x1's cost range is [0, 0]; the
    # same by every way of summing the rows (the arrays' filter keeps the free
    # column alone).  The ranges were found by this model's own search over small
    # models with a free column, and are checked here by the report's check.
    from exactlp.report_check import check_report
    from exactlp.reports import sensitivity_report

    m = model_from_text(FREE_AT_ZERO)
    r = exactlp.solve(m, warm_start=False)
    assert "x0" not in r.basis and "x1" in r.basis and r.primal["x0"] == 0 and r.reduced_costs["x0"] == 0
    for how in ("rows", "numpy", "limbs"):
        got = _sensitivity_summed(m, how, monkeypatch)
        assert got.objective_ranges["x1"] == Interval(F(0), F(0)), how
        assert got.objective_ranges["x0"] == Interval(F(0), F(0)), how
        assert got.objective_ranges["x2"] == Interval(F(0), None), how
        v = check_report(m, sensitivity_report(m, got))
        assert v.valid, v.failure


@needs_netlib
@pytest.mark.parametrize("name", ["ADLITTLE", "SHARE2B", "SC50A"])
def test_sensitivity_by_numpy_sums_on_netlib_problems(monkeypatch, name):
    # real bases, with rows of B^-1 over long common denominators (source of the
    # data: the Netlib LP set); the report by numpy's sums passes the check
    from exactlp.io import read_mps
    from exactlp.report_check import check_report
    from exactlp.reports import sensitivity_report

    from .conftest import netlib_table

    m = read_mps(NETLIB / netlib_table()[name]["file"])
    by_rows = _sensitivity_summed(m, "rows", monkeypatch)
    got = _sensitivity_summed(m, "numpy", monkeypatch)
    assert _ranged(got) == _ranged(by_rows)
    assert _ranged(_sensitivity_summed(m, "limbs", monkeypatch)) == _ranged(by_rows)
    v = check_report(m, sensitivity_report(m, got))
    assert v.valid, v.failure


def test_sensitivity_report_tampering_is_caught():
    import copy

    from exactlp.report_check import check_report
    from exactlp.reports import sensitivity_report

    m = model_from_text(THREE)
    rep = sensitivity_report(m, sensitivity(m))
    v = check_report(m, rep)
    assert (v.valid, v.status, [(c.name, c.ok, c.detail) for c in v.checks[1:]]) == (
        True, "its sensitivity ranges", [("the optimum", True, "certificate valid (optimal)"),
                                         ("sensitivity", True, "every range end re-derived from the optimum and its direction")])
    from exactlp.verifier import Check, Verification

    assert check_report(m, [rep]) == Verification(False, None, (Check("report", False, "expected a mapping at the top of the report"),))
    bad = copy.deepcopy(rep)
    bad["objective_ranges"]["x1"]["upper"] = "13/2"  # widen a range beyond what holds
    assert not check_report(m, bad).valid
    bad = copy.deepcopy(rep)
    bad["rhs_ranges"]["r1"]["dual"] = "2"
    assert check_report(m, bad).failure.detail == "rhs_ranges.r1: the dual differs from the certificate's"
    bad = copy.deepcopy(rep)
    bad["rhs_ranges"]["r3"]["upper"] = "11"  # beyond the end the dual changes
    assert not check_report(m, bad).valid


def _proven_the_long_way(model, rep) -> bool:
    """The sensitivity report's claims proven by definition: for each end of each
    range, the variant model (helpers.with_coefficient, only_variable, with_side)
    and a whole certificate for it (helpers.optimal_certificate, from the claimed
    end and direction), checked by the verifier.  The report check proves the same
    from the direction's entries alone; the two verdicts must agree."""
    from exactlp.numbers import parse_number as P
    from .helpers import only_variable, optimal_certificate, with_side

    def num(text):
        return None if text is None else P(text)

    base = rep["certificate"]
    if not exactlp.verify(model, base).valid or base["status"] != "optimal":
        return False
    x, y = ({k: P(v) for k, v in base[part].items()} for part in ("primal", "duals"))
    z = P(base["objective"])
    if P(rep["objective"]) != z:
        return False
    cost = dict(model.objective)
    for name, e in rep["objective_ranges"].items():
        lo, hi, cj = num(e["lower"]), num(e["upper"]), cost.get(name, F(0))
        if (lo is not None and lo > cj) or (hi is not None and hi < cj):
            return False
        w = {k: P(v) for k, v in e["dual_direction"].items()}
        for end, sign in ((lo, -1), (hi, 1)):
            if end is None:
                probe, duals = only_variable(model, name, sign), {k: sign * v for k, v in w.items()}
            else:
                probe, duals = with_coefficient(model, name, end), {k: y[k] + (end - cj) * w.get(k, 0) for k in y}
            if not exactlp.verify(probe, optimal_certificate(probe, x, duals)).valid:
                return False
    for name, e in rep["rhs_ranges"].items():
        con = next(c for c in model.constraints if c.name == name)
        which, value, dual, lo, hi = e["bound"], num(e["value"]), num(e["dual"]), num(e["lower"]), num(e["upper"])
        side = {"upper": con.upper, "lower": con.lower, "equals": con.lower}[which]
        if dual != y[name] or side != value or (lo is not None and lo > value) or (hi is not None and hi < value):
            return False
        v = None if e["allocation_direction"] is None else {k: P(t) for k, t in e["allocation_direction"].items()}
        for end, sign in ((lo, -1), (hi, 1)):
            if end is None and v is not None:  # x + s sign v stays feasible for every s >= 0, at the dual's rate
                if any((sign * v.get(u.name, 0) > 0 and u.upper is not None)
                       or (sign * v.get(u.name, 0) < 0 and u.lower is not None) for u in model.variables):
                    return False
                for c in model.constraints:
                    a = sign * sum((k * v.get(n, 0) for n, k in c.terms), F(0))
                    if (c.name == name and a != sign) or (c.name != name and (
                            (a > 0 and c.upper is not None) or (a < 0 and c.lower is not None))):
                        return False
                if sum((k * v.get(n, 0) for n, k in model.objective), F(0)) != dual:
                    return False
                continue
            t = 0 if end is None or v is None else end - value
            moved = {k: x[k] + t * (v or {}).get(k, 0) for k in x}
            probe = with_side(model, name, which, end)
            cert = optimal_certificate(probe, moved, y)
            if not exactlp.verify(probe, cert).valid:
                return False
            if end is not None and P(cert["objective"]) != z + dual * (end - value):
                return False
    return True


def _tampered(rep):
    """Reports with one claim changed each: an end moved in or out, or made
    infinite or finite, a direction entry moved, dropped or added, a dual changed."""
    import copy

    from exactlp.numbers import format_number, parse_number as P

    out = []

    def changed(path, value):
        doc = copy.deepcopy(rep)
        node = doc
        for key in path[:-1]:
            node = node[key]
        if value is _DROP:
            del node[path[-1]]
        else:
            node[path[-1]] = value
        out.append(doc)

    rows = list(rep["certificate"]["duals"])
    variables = list(rep["certificate"]["primal"])
    for kind, dkey, names in (("objective_ranges", "dual_direction", rows), ("rhs_ranges", "allocation_direction", variables)):
        for name, e in rep[kind].items():
            for side in ("lower", "upper"):
                end = e[side]
                if end is None:
                    changed((kind, name, side), e["value"] if "value" in e else "0")
                else:
                    changed((kind, name, side), None)
                    for delta in (F(1, 7), F(-1, 7), F(3), F(-3)):
                        changed((kind, name, side), format_number(P(end) + delta))
            direction = e[dkey]
            if direction is None:
                changed((kind, name, dkey), {variables[0]: "1"})
                continue
            for k, val in list(direction.items())[:3]:
                changed((kind, name, dkey, k), format_number(P(val) + F(1, 3)))
                changed((kind, name, dkey, k), _DROP)
            spare = [k for k in names if k not in direction]
            if spare:
                changed((kind, name, dkey, spare[0]), "1/2")
            if kind == "rhs_ranges":
                changed((kind, name, dkey), None)
                changed((kind, name, "dual"), format_number(P(e["dual"]) + 1))
    return out


_DROP = object()
SENSITIVITY_CASES = ["berth", "drought", "drought_minimax", "emissions", "grants", "shares_historic"]


@pytest.mark.parametrize("case", SENSITIVITY_CASES)
def test_the_report_check_agrees_with_whole_certificates_for_every_end(case):
    # The report holds one direction per range, and the check proves each end
    # from the direction's entries alone; a whole certificate per end, checked by
    # the verifier, is the definition.  Every honest report passes both; every
    # report with one claim changed gets the same verdict from both, and the
    # changes are not all harmless (some moved ends still hold: an end moved
    # inwards, or a direction entry in a row that does not matter).
    from exactlp.report_check import check_report
    from exactlp.reports import sensitivity_report

    m = exactlp.load(CASES / f"{case}.yaml")
    rep = sensitivity_report(m, sensitivity(m))
    assert check_report(m, rep).valid and _proven_the_long_way(m, rep)
    verdicts = []
    for bad in _tampered(rep):
        got = check_report(m, bad)
        assert got.valid == _proven_the_long_way(m, bad), (got.failure, bad)
        verdicts.append(got.valid)
    assert verdicts.count(False) > len(verdicts) // 3


def _refusals(model, reports) -> list:
    from exactlp.report_check import check_report

    return [None if (v := check_report(model, r)).valid else v.failure.detail for r in reports]


@pytest.mark.parametrize("kind, case", [*(("sensitivity", c) for c in SENSITIVITY_CASES),
                                        # (the cases whose optimum is not unique: ends solved, and refused)
                                        ("ranges", "shares_historic"), ("ranges", "network 6 9 3")])
def test_the_report_check_says_the_same_with_its_numbers_as_fractions(kind, case, monkeypatch):
    # The sensitivity check, and the ranges check's sum of each end's dual
    # objective, take the entries as whole numbers over one denominator
    # (report_check._whole, _times_whole, _Sides); where that denominator would
    # be long (many different primes) they keep them as Fractions over 1, and
    # every sum and comparison reads the same.  That second way, forced here for
    # every vector, side and coefficient, must pass and refuse the same reports
    # in the same words.
    import exactlp.report_check as rc

    from .helpers import network

    write, tamper, _ = _report_kinds()[kind]
    m = network(*map(int, case.split()[1:])) if case.startswith("network") else exactlp.load(CASES / f"{case}.yaml")
    rep = write(m)
    reports = [rep, *tamper(rep)]
    whole = _refusals(m, reports)
    assert whole[0] is None and whole.count(None) < len(whole) * 2 // 3
    monkeypatch.setattr(rc, "_lcm_capped", lambda dens: None)
    monkeypatch.setattr(rc, "_whole", lambda vals: (vals, 1))
    assert rc._Sides(rc._Matrix(m)).S == 1 and rc._times_whole({"r": F(1, 3)}, {"r": [("a", F(1, 2))]},
                                                                  {"a": None}) == ({"a": F(1, 6)}, 1)
    assert _refusals(m, reports) == whole


def test_a_model_whose_sides_share_no_short_denominator_is_checked_as_fractions():
    # 40 bounds over 40 different primes: their least common denominator has
    # about 250 bits against a cap of 64 + 2 * 8, so the sides stay Fractions
    # (S = 1); the report still checks, and a moved end is still refused
    import copy

    import exactlp.report_check as rc
    from exactlp.reports import sensitivity_report

    primes = [p for p in range(2, 200) if all(p % q for q in range(2, p))][:40]
    text = ("maximize: " + " + ".join(f"{k + 1} x{k}" for k in range(40)) + "\nvariables:\n"
            + "".join(f"  x{k}: {{lower: 0, upper: 1/{p}}}\n" for k, p in enumerate(primes))
            + "constraints:\n  total: " + " + ".join(f"x{k}" for k in range(40)) + " <= 1/5\n")
    m = model_from_text(text)
    assert rc._Sides(rc._Matrix(m)).S == 1
    rep = sensitivity_report(m, sensitivity(m))
    assert _refusals(m, [rep]) == [None]
    bad = copy.deepcopy(rep)
    bad["rhs_ranges"]["total"]["upper"] = "100"
    # the total of 1/5 raised to 100 moves x18 (its direction) by 100 - 1/5, past its 1/67
    assert rep["rhs_ranges"]["total"]["allocation_direction"] == {"x18": "1"} and primes[18] == 67
    moved = parse_number(rep["certificate"]["primal"]["x18"]) + 100 - F(1, 5)
    assert _refusals(m, [bad]) == [f"rhs_ranges.total.upper: the moved allocation breaks the bounds of 'x18' "
                                   f"({moved.numerator}/{moved.denominator})"]


def test_the_report_check_names_what_is_wrong_with_a_direction():
    import copy

    from exactlp.report_check import check_report
    from exactlp.reports import sensitivity_report

    m = exactlp.load(CASES / "grants.yaml")
    rep = sensitivity_report(m, sensitivity(m))
    assert rep["format"] == "exactlp-report/3"
    assert rep["rhs_ranges"]["fund"]["allocation_direction"] == {"coast_west": "1"}
    assert rep["objective_ranges"]["coast_west"]["dual_direction"] == {"fund": "1"}
    cases = [
        (("rhs_ranges", "fund", "allocation_direction"), {"nowhere": "1"},
         "rhs_ranges.fund.allocation_direction: 'nowhere' is not in the model"),
        (("rhs_ranges", "fund", "allocation_direction"), {"coast_west": 1},
         "rhs_ranges.fund.allocation_direction.coast_west: expected an exact number as a string, found 1"),
        (("objective_ranges", "coast_west", "dual_direction"), ["fund"],
         "objective_ranges.coast_west.dual_direction: expected a mapping of names to exact numbers, found ['fund']"),
        # without the fund's dual moving, at 7.5 (t = -2/5, x = 61/20) the objective is
        # 9917/100 - 2/5 * 61/20 = 1959/20, and coast_west's reduced cost -2/5 rests on
        # its lower bound 6/5: the dual objective is 9917/100 - 12/25 = 9869/100
        (("objective_ranges", "coast_west", "dual_direction"), {},
         "objective_ranges.coast_west.lower: the duals along the direction leave a gap (1959/20 against 9869/100): "
         "the allocation is not shown optimal there"),
        # the fund at 13 (t = 1/2) takes coast_west from 61/20 to 71/20, past its 7/2
        (("rhs_ranges", "fund", "upper"), "13",
         "rhs_ranges.fund.upper: the moved allocation breaks the bounds of 'coast_west' (71/20)"),
    ]
    for path, value, message in cases:
        bad = copy.deepcopy(rep)
        bad[path[0]][path[1]][path[2]] = value
        assert check_report(m, bad).failure.detail == message
    old = copy.deepcopy(rep)
    old["format"] = "exactlp-report/1"
    assert check_report(m, old).failure.detail == ("format: expected 'exactlp-report/3', found 'exactlp-report/1' "
                                                   "(a sensitivity report of an earlier layout: write it again)")
    old["format"] = "exactlp-report/2"  # (the third added a proof to ranges only)
    assert check_report(m, old).valid
    # the first layout's conflict reports are the second's and third's, and still check
    from exactlp.analysis import ranges
    from exactlp.reports import conflict_report, ranges_report

    model = exactlp.load(CASES / "grants_overcommitted.yaml")
    rep = conflict_report(model, conflict(model))
    assert rep["format"] == "exactlp-report/3" and check_report(model, rep).valid
    rep["format"] = "exactlp-report/1"
    assert check_report(model, rep).valid
    rep["format"] = "exactlp-report/4"
    assert check_report(model, rep).failure.detail == "format: expected 'exactlp-report/3', found 'exactlp-report/4'"
    rep = ranges_report(m, ranges(m))
    rep["format"] = "exactlp-report/1"
    assert check_report(m, rep).failure.detail == ("format: expected 'exactlp-report/3', found 'exactlp-report/1' "
                                                   "(a ranges report of an earlier layout: write it again)")


# -- probes that share one start ---------------------------------------------
# The probes of allocation ranges differ only in their objective, so their start
# (the parent's optimal basis plus the held row's logical) is factored and checked
# once (solver.ObjectiveProbes).  These check that each probe's result is the one
# a solve of its own from the same start gives, field for field, pivot for pivot.

def _same_but_time(a, b) -> dict:
    import dataclasses

    return {f.name: (getattr(a, f.name), getattr(b, f.name)) for f in dataclasses.fields(a)
            if f.name != "seconds" and getattr(a, f.name) != getattr(b, f.name)}


def _held_start(model):
    """``(r, fixed, start)``: the model's optimum (solved cold), the model with its
    objective held there, and the optimum's basis as a start for the latter."""
    from exactlp.analysis import fixed_objective_model
    from exactlp.floatlp import BasisHint

    r = exactlp.solve(model, warm_start=False)
    fixed = fixed_objective_model(model, r.objective)
    return r, fixed, BasisHint.of_result(r, len(model.variables), len(model.constraints), added_rows=1)


def _probe_pairs(model, limit=None):
    """(probe, shared-start result, own-start result) for each variable and sense."""
    from exactlp.model import Sense
    from exactlp.solver import ObjectiveProbes

    r, fixed, start = _held_start(model)
    shared = ObjectiveProbes(fixed, start, warm_start=False)
    for v in model.variables[:limit]:
        for sense in ("minimize", "maximize"):
            probe = replace(fixed, sense=Sense(sense), objective=((v.name, F(1)),), objective_constant=F(0))
            yield probe, shared.solve(probe), exactlp.solve(probe, start_basis=start)


def test_the_matrix_copies_one_probe_makes_are_kept_for_the_next():
    # (invented numbers) the probes of a shared start pivot, and the copies of
    # the matrix they make (by rows, as integers) are handed to the start once
    # made: each later probe adopts them, so each copy is one object from the
    # probe that first made it to the last.  Each probe's optimum is the face's
    # (a = 6, b = 4, c = 0: the optimum 36 is reached there alone).
    from exactlp.model import Sense
    from exactlp.solver import ObjectiveProbes

    model = model_from_text("maximize: 4 a + 3 b + 3 c\n"
                            "variables: {a: {upper: 6}, b: {upper: 6}, c: {upper: 6}}\nconstraints:\n"
                            "  cap: a + b + c <= 10\n  mix: a - b <= 2\n  pair: b + c <= 7\n")
    r, fixed, start = _held_start(model)
    assert r.objective == 36 and dict(r.primal) == {"a": 6, "b": 4, "c": 0}
    shared = ObjectiveProbes(fixed, start, warm_start=False)
    first: dict = {}
    pivoted = 0
    for v in model.variables:
        for sense in ("minimize", "maximize"):
            probe = replace(fixed, sense=Sense(sense), objective=((v.name, F(1)),), objective_constant=F(0))
            got = shared.solve(probe)
            assert got.objective == r.primal[v.name]
            pivoted += got.iterations > 0
            for name, copy in shared._state.caches.items():
                assert first.setdefault(name, copy) is copy, name
    assert pivoted >= 4 and {"_rows_cache", "_int_rows_cache", "_int_cols_cache"} <= set(first)


@settings(max_examples=120, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(lp_models(max_vars=5, max_rows=4))
def test_probes_from_a_shared_start_are_the_solves_from_their_own(model):
    if exactlp.solve(model, warm_start=False).status.value != "optimal":
        return
    for probe, got, own in _probe_pairs(model):
        assert _same_but_time(got, own) == {}
        assert got.warm_start == "accepted: the suggested basis is exactly primal feasible"
        if got.status.value == "optimal":
            assert type(got.objective) is F
        assert exactlp.verify(probe, exactlp.build_certificate(probe, got)).valid


@settings(max_examples=120, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(lp_models(max_vars=5, max_rows=4))
def test_probes_told_their_start_values_hand_back_those_that_did_not_move(model):
    # ObjectiveProbes(start_values=...): a value of the start that a probe's result
    # keeps comes back as the given Fraction itself (ranges tell unmoved entries by
    # identity; here every entry of a probe that takes no step), a given value that
    # is not the start's is never used (one planted here, off by one), and every
    # result is the probe's own solve, as Fractions
    from exactlp.model import Sense
    from exactlp.solver import ObjectiveProbes

    if exactlp.solve(model, warm_start=False).status.value != "optimal":
        return
    r, fixed, start = _held_start(model)
    act = dict(r.activities)
    act[fixed.constraints[-1].name] = fixed.constraints[-1].lower
    primal = dict(r.primal)
    planted = model.variables[0].name
    primal[planted] = primal[planted] + 1
    shared = ObjectiveProbes(fixed, start, start_values=(primal, act), warm_start=False)
    for v in model.variables:
        for sense in ("minimize", "maximize"):
            probe = replace(fixed, sense=Sense(sense), objective=((v.name, F(1)),), objective_constant=F(0))
            got, own = shared.solve(probe), exactlp.solve(probe, start_basis=start)
            assert _same_but_time(got, own) == {}
            if got.status.value not in ("optimal", "unbounded"):
                continue
            assert all(type(value) is F for value in got.primal.values())
            assert got.primal[planted] is not primal[planted]
            if got.status.value == "optimal":  # (kept as their nonzero entries: every name, 0 as a Fraction)
                assert list(got.duals) == [c.name for c in fixed.constraints]
                assert list(got.reduced_costs) == [v.name for v in fixed.variables]
                assert all(type(a) is F for a in [*got.duals.values(), *got.reduced_costs.values()])
            if got.pivots_phase1 + got.pivots_phase2 + got.bound_flips == 0:
                assert all(got.primal[k] is primal[k] for k in primal if k != planted)
                assert all(got.activities[k] is act[k] for k in act)


@settings(max_examples=120, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(lp_models(max_vars=5, max_rows=4))
def test_probes_by_numpy_rows_are_the_solves_from_their_own(model):
    # The same, with every tableau row summed by numpy (as on models of 20,000
    # nonzeros or more).  The function that sums them is kept with the matrix's
    # copies and handed from probe to probe; it once read the basis order of the
    # probe that made it, so a later probe dropped the wrong column from its row:
    # on a generated network of 1,000 rows, 'ranges' claimed a maximum of 24
    # where the true one is 9 (its certificate failed the verifier).
    from exactlp.solver import rows as rows_module

    if exactlp.solve(model, warm_start=False).status.value != "optimal":
        return
    saved = rows_module.NUMPY_ROW_NONZEROS
    rows_module.NUMPY_ROW_NONZEROS = 0
    try:
        pairs = list(_probe_pairs(model))
    finally:
        rows_module.NUMPY_ROW_NONZEROS = saved
    for probe, got, own in pairs:
        assert _same_but_time(got, own) == {}
        assert exactlp.verify(probe, exactlp.build_certificate(probe, got)).valid


def test_probes_that_pivot_leave_the_shared_start_as_it_was():
    # ALTERNATIVE's probes pivot away from the start (its optimum is not unique);
    # solving them twice over, in either order, gives the same results, so no
    # probe's pivots reached the factorisation the next one copies
    m = model_from_text(ALTERNATIVE)
    first = [(p, got) for p, got, _ in _probe_pairs(m)]
    assert any(got.iterations > 0 for _, got in first)
    from exactlp.analysis import fixed_objective_model
    from exactlp.floatlp import BasisHint
    from exactlp.solver import ObjectiveProbes

    r = exactlp.solve(m, warm_start=False)
    fixed = fixed_objective_model(m, r.objective)
    shared = ObjectiveProbes(fixed, BasisHint.of_result(r, 2, 1, added_rows=1))
    for probe, got in reversed(first):  # rebuilt probes share the fixed model's rows
        again = shared.solve(replace(fixed, sense=probe.sense, objective=probe.objective))
        assert _same_but_time(again, got) == {}
    assert {(p.objective[0][0], p.sense.value): got.objective for p, got in first} == {
        ("x", "minimize"): F(1), ("x", "maximize"): F(3), ("y", "minimize"): F(1), ("y", "maximize"): F(3)}


def _face_probe_pairs(m):
    """(probe, shared-start result, own-start result) for every variable and sense
    of the optimal face of ``m`` (the probes of allocation ranges), with the
    shared start's factorisation."""
    from exactlp.analysis import optimal_face_model
    from exactlp.floatlp import BasisHint
    from exactlp.model import Sense
    from exactlp.solver import ObjectiveProbes

    r = exactlp.solve(m, warm_start=False)
    face = optimal_face_model(m, r)
    start = BasisHint.of_result(r, len(m.variables), len(m.constraints))
    shared = ObjectiveProbes(face, start, warm_start=False)
    out = []
    for v in m.variables:
        for sense in ("minimize", "maximize"):
            probe = replace(face, sense=Sense(sense), objective=((v.name, F(1)),), objective_constant=F(0))
            out.append((probe, shared.solve(probe), exactlp.solve(probe, start_basis=start)))
    return out, shared


def test_face_probes_on_a_network_are_the_solves_from_their_own(monkeypatch):
    # On the optimal face the optimum's decided columns are fixed, so the pivot
    # loop leaves their reduced costs to the result; a probe's result sums only
    # those that meet a row of nonzero dual when such rows are few (an eighth of
    # the rows or less).  Each is here checked against every fixed column summed,
    # and each whole result is the probe's own solve from the same start.
    import exactlp.solver as solver_module

    from .helpers import network

    original = solver_module._sparse_reduced_costs
    few = []

    def checked(form, sx, kept, y, n):
        got = original(form, sx, kept, y, n)
        full = {}
        for j in range(n):
            d = kept[j] if kept[j] is not None else ZERO_Q if sx.state[j] == 0 else solver_module._reduced_cost(form, y, j)
            if d:
                full[j] = d
        assert got == full
        few.append(sum(1 for v in y if v) * 8 <= len(y))
        return got

    monkeypatch.setattr(solver_module, "_sparse_reduced_costs", checked)
    m = network(20, 30, 6)
    # (a probe whose variable rests at the bound its sense seeks is optimal at the
    # start: its outcome is made without the pivot loop, see _start_optimal)
    with calls_recorded(solver_module, "_start_optimal") as known:
        pairs, _ = _face_probe_pairs(m)
    assert len(pairs) == 2 * len(m.variables) == 244
    for probe, got, own in pairs:
        assert _same_but_time(got, own) == {}
    assert len(few) == len(pairs) and 0 < sum(few) < len(few)  # (both ways taken)
    assert len(known) == len(pairs) and 0 < sum(known) < len(known)
    assert sum(got.iterations > 0 for _, got, _ in pairs) >= 20


def test_face_probes_that_pivot_leave_the_start_factors_as_they_were():
    # a probe's copy of the start's factorisation shares U's rows with it and
    # copies each before its first change: the start's rows are the same after
    # every probe, and solving the probes again in the other order gives the same
    from .helpers import network

    m = network(20, 30, 6)
    pairs, shared = _face_probe_pairs(m)
    start = shared._state.basis
    rows = [dict(row) for row in start._urows]
    assert sum(got.iterations > 0 for _, got, _ in pairs) >= 20
    for probe, got, _ in reversed(pairs):
        assert _same_but_time(shared.solve(probe), got) == {}
    assert start._urows == rows and start._urows_shared is None


def test_probes_fall_back_to_their_own_solve_when_nothing_can_be_shared():
    from exactlp.analysis import fixed_objective_model
    from exactlp.errors import InputError
    from exactlp.floatlp import BasisHint
    from exactlp.solver import ObjectiveProbes

    m = model_from_text(ALTERNATIVE)
    r = exactlp.solve(m, warm_start=False)
    fixed = fixed_objective_model(m, r.objective)
    good = BasisHint.of_result(r, 2, 1, added_rows=1)
    # a probe with other rows is solved on its own, from the same start
    other = model_from_text(ALTERNATIVE.replace("x + y <= 4", "x + y <= 5"))
    got = ObjectiveProbes(fixed, good).solve(other)
    # (the start names the held row's logical, a column this model does not have)
    assert got.objective == 5 and got.warm_start == "rejected: the suggested basis names a column the model does not have"
    # a start that is not accepted as it stands: every probe is solved in full
    short = BasisHint(good.basic[:-1], frozenset(), "test", "exact")
    probes = ObjectiveProbes(fixed, short)
    assert probes._state is None
    got = probes.solve(replace(fixed, objective=(("x", F(1)),)))  # (maximised, as the model is)
    assert got.objective == 3 and got.warm_start == "rejected: the suggested basis does not have one column per row"
    with pytest.raises(InputError) as e:
        ObjectiveProbes(fixed, (0, 1))
    assert (e.value.field, e.value.message) == ("start_basis", "must be a BasisHint, not tuple")
    with pytest.raises(InputError) as e:
        ObjectiveProbes(fixed, good, pricing="fastest")
    assert e.value.field == "pricing" and e.value.message.startswith("unknown pricing rule 'fastest'")


def test_a_basis_copy_is_only_for_one_not_yet_updated():
    from gmpy2 import mpq

    from exactlp.solver.basis import factor_ft

    cols = [[(0, mpq(2)), (1, mpq(1))], [(0, mpq(1)), (1, mpq(3))], [(0, mpq(-1))], [(1, mpq(-1))]]
    unit_row = {2: (0, -1), 3: (1, -1)}
    b, head = factor_ft(2, [0, 1], cols, unit_row)
    b.make_rows()
    twin = b.fresh_copy()
    assert twin.lsteps is b.lsteps and twin._urows is not b._urows and twin._urows == b._urows
    p = head.index(0)
    w = twin.ftran(cols[2])
    twin.replace(p, w, cols[2])  # column 0 leaves for the first logical, in the copy only
    assert twin.rsteps or twin._dicts
    assert b.ftran([(0, mpq(1))]) == {head.index(0): mpq(3, 5), head.index(1): mpq(-1, 5)}
    with pytest.raises(ValueError, match="only a basis not yet updated can be copied"):
        twin.fresh_copy()


def test_fresh_copies_of_one_factorisation_make_its_short_copy_once(monkeypatch):
    # each probe of allocation ranges pivots on a fresh copy of one start, and
    # the steering's short copy of its factors (shadow.ShortFactors.of) is the
    # same for all: made once and shared through the factorisation's
    # short_copies, each copy with its own etas and count of updates; once a
    # copy's factors are replaced by an update, it gets none from the memo
    from gmpy2 import mpq

    from exactlp.solver import shadow
    from exactlp.solver.basis import factor_ft

    cols = [[(0, mpq(2, 3)), (1, mpq(1, 7))], [(0, mpq(1, 5)), (1, mpq(3, 11))], [(0, mpq(-1))], [(1, mpq(-1))]]
    b, head = factor_ft(2, [0, 1], cols, {2: (0, -1), 3: (1, -1)})
    made = []
    real = shadow.ShortFactors._of

    def counted(*args):
        made.append(real(*args))
        return made[-1]

    monkeypatch.setattr(shadow.ShortFactors, "_of", staticmethod(counted))
    first, second = b.fresh_copy(), b.fresh_copy()
    one, two = shadow.ShortFactors.of(first, 0), shadow.ShortFactors.of(second, 0)
    assert len(made) == 1 and one is not two and one.basis is first and two.basis is second
    assert one.lsteps is two.lsteps is made[0][0] and one.ucols is two.ucols is made[0][1] and one.size == two.size
    one.add_eta(0, 1 << shadow.SHIFT, [])
    assert (one.updates, len(one.etas), two.updates, two.etas) == (1, 1, 0, [])
    fresh = shadow.ShortFactors(second, *real(second.lsteps, second.ucols, 0))
    assert two.solve({0: 1 << shadow.SHIFT}) == fresh.solve({0: 1 << shadow.SHIFT}) != {}
    assert shadow.ShortFactors.of(b, 0).lsteps is made[0][0] and len(made) == 1
    # what the factorisation keeps refers to no basis (the solver makes no cycles)
    assert all(not isinstance(x, shadow.ShortFactors) for kept in b.short_copies.values() for x in kept)
    assert shadow.ShortFactors.of(b, 10**6) is None and len(made) == 2  # another rule: its own
    p = head.index(0)
    first.replace(p, first.ftran(cols[2]), cols[2])  # first's factors change
    assert shadow.ShortFactors.of(first, 0) is None and len(made) == 2


def test_range_probes_leave_nothing_to_the_cyclic_collector(monkeypatch):
    # the solver makes no reference cycles, so pausing the collector during a
    # solve (solver._collector_paused) leaves nothing behind; allocation ranges'
    # probes share their start's factorisation and its short copies, taken here
    # for every factorisation: a first version of the short copies' memo kept
    # an object that refers to its basis, and left 118 objects in cycles on
    # this network (0 without it)
    from exactlp.analysis import ranges
    from exactlp.solver import dual as dual_module, steer

    from .helpers import left_in_cycles, network

    monkeypatch.setattr(steer, "STEER_BITS", 0)
    monkeypatch.setattr(dual_module, "TAU_SHORT_BITS", 0)
    m = network(6, 9, 3)

    def check(rg):
        assert sum(len(ends) for ends in rg.endpoints.values()) == 22

    assert left_in_cycles(lambda: ranges(m), check) == 0


def test_conflict_filter_leaves_nothing_to_the_cyclic_collector():
    # the filter pauses the collector over its trials (as ranges do over their
    # probes): none of them may make a reference cycle, or it would be kept
    # until the collector runs again; here a network made infeasible with every
    # source's yield cut to a tenth, whose conflict is many rules and bounds
    import re

    from .helpers import left_in_cycles, network_text

    text = re.sub(r"^(  yield_\d+: .*<= )(\d+)$", lambda g: f"{g[1]}{int(g[2]) // 10}", network_text(6, 9, 3),
                  flags=re.M)
    m = model_from_text(text)

    def check(c):
        assert (len(c.constraints), len(c.bounds), c.solves) == (11, 4, 17)

    assert left_in_cycles(lambda: conflict(m), check) == 0


@needs_netlib
def test_shared_start_probes_on_adlittle_match_their_own_solves():
    # a real model with a degenerate optimum (source of the data: the Netlib LP set)
    from exactlp.io.mps import read_mps

    m = read_mps(NETLIB / "adlittle.mps.gz")
    pivoted = 0
    for probe, got, own in _probe_pairs(m, limit=40):
        assert _same_but_time(got, own) == {}
        pivoted += got.iterations > 0
    assert pivoted > 0


@needs_netlib
@pytest.mark.parametrize("name", ["afiro", "sc50a", "adlittle", "share2b", "blend"])
def test_ranges_on_the_optimal_face_on_netlib(name):
    # real models with equality rows and degenerate optima (source of the data:
    # the Netlib LP set): every end lifted from the optimal face is a whole
    # certificate the verifier accepts for the model with the held row, its value
    # that of the held row's own probe, and the report passes its check
    from exactlp.analysis import ranges
    from exactlp.floatlp import BasisHint
    from exactlp.io.mps import read_mps
    from exactlp.report_check import check_report
    from exactlp.reports import ranges_report
    from exactlp.solver import ObjectiveProbes

    m = read_mps(NETLIB / f"{name}.mps.gz")
    rg = ranges(m, warm_start=False)
    held = ObjectiveProbes(rg.fixed_model, BasisHint.of_result(rg.result, len(m.variables), len(m.constraints),
                                                                added_rows=1))
    assert len(rg.endpoints) >= 10
    for ends in rg.endpoints.values():
        for probe, got in ends:
            assert exactlp.verify(probe, exactlp.build_certificate(probe, got)).valid
            assert got.objective == held.solve(probe).objective
    assert check_report(m, ranges_report(m, rg)).valid


DEMAND = "minimize: 2 x + 3 y\nvariables: {x: {lower: 0}, y: {lower: 0}}\nconstraints:\n  demand: x + y >= 5\n"


def test_a_limit_without_end_is_proven_by_its_direction():
    # raising the demand without end, x follows it at the dual's rate 2; a
    # direction split over x and y also follows the limit upwards and meets no
    # bound, but moves the objective at 5/2 a unit, not 2: both checks refuse it
    import copy

    from exactlp.report_check import check_report
    from exactlp.reports import sensitivity_report

    m = model_from_text(DEMAND)
    rep = sensitivity_report(m, sensitivity(m))
    assert rep["rhs_ranges"]["demand"] == {"bound": "lower", "value": "5", "dual": "2", "lower": "0", "upper": None,
                                           "allocation_direction": {"x": "1"}}
    assert check_report(m, rep).valid and _proven_the_long_way(m, rep)
    bad = copy.deepcopy(rep)
    bad["rhs_ranges"]["demand"]["allocation_direction"] = {"x": "1/2", "y": "1/2"}
    bad["rhs_ranges"]["demand"]["lower"] = "5"  # (the range narrowed to the limit: that end holds as it is)
    assert check_report(m, bad).failure.detail == "rhs_ranges.demand.upper: the objective does not move at the dual's rate"
    assert not _proven_the_long_way(m, bad)
    # a direction that leaves the row where it is, one that moves it twice as fast,
    # and one that runs x below its bound 0
    for direction, problem in (({}, "the direction does not follow the limit"),
                               ({"x": "2"}, "the direction does not follow the limit"),
                               ({"x": "-1"}, "the direction runs into a bound of 'x'")):
        bad["rhs_ranges"]["demand"]["allocation_direction"] = direction
        assert check_report(m, bad).failure.detail == f"rhs_ranges.demand.upper: {problem}"
    # with 'other: x - y <= 3' beside it the demand is followed along x + y = y + 3
    # (the report's own direction, half each); x alone meets 'other' at one unit a
    # unit of the limit, and leaves it
    m = model_from_text(DEMAND + "  other: x - y <= 3\n")
    rep = sensitivity_report(m, sensitivity(m))
    assert rep["rhs_ranges"]["demand"]["allocation_direction"] == {"x": "1/2", "y": "1/2"} and check_report(m, rep).valid
    rep["rhs_ranges"]["demand"].update(lower="5", allocation_direction={"x": "1"})
    assert check_report(m, rep).failure.detail == "rhs_ranges.demand.upper: the direction leaves constraint 'other'"
    for bad in _tampered(rep):
        assert check_report(m, bad).valid == _proven_the_long_way(m, bad)


def test_a_finite_end_is_checked_on_the_moved_row_when_its_direction_misses_it():
    # 'demand: x >= 2', w outside every row: raising the demand to 5 moves x to 5
    # with it (the row at its new side), and the objective by the dual 1 a unit.
    # A forged direction along w instead moves the objective by the same 3, keeps
    # w within its bounds and meets no row, so every sum agrees; only the moved row
    # itself, still at 2 against its new side 5, shows the end is not reached
    import copy

    from exactlp.report_check import check_report
    from exactlp.reports import sensitivity_report

    m = model_from_text("minimize: x + w\nvariables: {x: {lower: 0}, w: {lower: 0}}\nconstraints:\n  demand: x >= 2\n")
    rep = sensitivity_report(m, sensitivity(m))
    assert rep["rhs_ranges"]["demand"] == {"bound": "lower", "value": "2", "dual": "1", "lower": "0", "upper": None,
                                           "allocation_direction": {"x": "1"}}
    rep["rhs_ranges"]["demand"].update(lower="2", upper="5")  # (narrowed: a finite end each side)
    assert check_report(m, rep).valid and _proven_the_long_way(m, rep)
    bad = copy.deepcopy(rep)
    bad["rhs_ranges"]["demand"]["allocation_direction"] = {"w": "1"}
    assert check_report(m, bad).failure.detail == "rhs_ranges.demand.upper: the moved allocation breaks constraint 'demand' (2)"
    assert not _proven_the_long_way(m, bad)



# -- ranges reports: each solved end's duals and moved entries ----------------

def _ranges_proven_the_long_way(model, rep) -> bool:
    """A ranges report's solved ends proven by definition: for each, the probe
    (the model with its objective held at the optimum by an equality row, one
    variable minimised or maximised) and a whole certificate for it, rebuilt
    from the end's moved entries and duals (helpers.optimal_certificate) or from
    its ray and the optimum, checked by the verifier."""
    from exactlp.analysis import fixed_objective_model
    from exactlp.model import Sense
    from exactlp.numbers import parse_number as P
    from .helpers import optimal_certificate

    base = rep["certificate"]
    if not exactlp.verify(model, base).valid:
        return False
    x = {k: P(v) for k, v in base["primal"].items()}
    fixed = fixed_objective_model(model, P(base["objective"]), rep["fixed_objective"]["name"])
    for name, e in rep["ranges"].items():
        if e["method"] != "solved":
            continue
        for side, sense in (("min", "minimize"), ("max", "maximize")):
            value, proof = e[side], e["proofs"][side]
            probe = replace(fixed, sense=Sense(sense), objective=((name, F(1)),), objective_constant=F(0))
            if "ray" in proof:
                ray = {k: P(v) for k, v in proof["ray"].items()}

                def times(p):
                    return {c.name: str(sum((a * p.get(n, 0) for n, a in c.terms), F(0))) for c in probe.constraints}
                cert = {"format": "exactlp-certificate/1", "model": {"name": probe.name, "fingerprint": probe.fingerprint},
                        "sense": sense, "status": "unbounded", "primal": base["primal"], "activities": times(x),
                        "ray": proof["ray"], "ray_activities": times(ray), "ray_objective": str(ray.get(name, F(0)))}
                if value is not None or not exactlp.verify(probe, cert).valid:
                    return False
                continue
            point = dict(x, **{k: P(v) for k, v in proof["moved"].items()})
            if "face_duals" in proof:  # the duals u - w y*, w on the held row
                if "duals" in proof:
                    return False
                w, ys = P(proof["held_dual"]), {k: P(v) for k, v in base["duals"].items()}
                u = {k: P(v) for k, v in proof["face_duals"].items()}
                duals = {k: u.get(k, F(0)) - w * ys.get(k, F(0)) for k in {*u, *ys}}
                duals[rep["fixed_objective"]["name"]] = w
            else:
                duals = {k: P(v) for k, v in proof["duals"].items()}
            cert = optimal_certificate(probe, point, duals)
            if not exactlp.verify(probe, cert).valid or value is None or P(cert["objective"]) != P(value):
                return False
    return True


def _ranges_tampered(rep):
    import copy

    from exactlp.numbers import format_number, parse_number as P

    out = []
    for name, e in rep["ranges"].items():
        if e["method"] != "solved":
            continue
        for side in ("min", "max"):
            proof = e["proofs"][side]
            if "held_dual" in proof:
                for new in (format_number(P(proof["held_dual"]) + F(1, 3)), "0"):
                    bad = copy.deepcopy(rep)
                    bad["ranges"][name]["proofs"][side]["held_dual"] = new
                    out.append(bad)
            for key in ("moved", "duals", "face_duals", "ray"):
                for k, val in list(proof.get(key, {}).items())[:3]:
                    for new in (format_number(P(val) + F(1, 3)), None):
                        bad = copy.deepcopy(rep)
                        part = bad["ranges"][name]["proofs"][side][key]
                        if new is None:
                            del part[k]
                        else:
                            part[k] = new
                        out.append(bad)
            names = list(rep["certificate"]["primal"]) if "ray" in proof else list(rep["certificate"]["duals"])
            key = "ray" if "ray" in proof else "face_duals" if "face_duals" in proof else "duals"
            spare = [k for k in names if k not in proof[key]]
            if spare:
                bad = copy.deepcopy(rep)
                bad["ranges"][name]["proofs"][side][key][spare[0]] = "1"
                out.append(bad)
            bad = copy.deepcopy(rep)
            value = e[side]
            bad["ranges"][name][side] = "0" if value is None else None
            out.append(bad)
            if value is not None:
                bad = copy.deepcopy(rep)
                bad["ranges"][name][side] = format_number(P(value) + F(1, 7))
                out.append(bad)
    return out


UNBOUNDED_SET = "minimize: x\nvariables: {x: {lower: 0}, y: {lower: 0}}\nconstraints:\n  c: x - y <= 0\n"


@pytest.mark.parametrize("text", [ALTERNATIVE, UNBOUNDED_SET, "berth", "drought", "shares_historic", "emissions"])
def test_the_ranges_check_agrees_with_whole_certificates(text):
    # each solved end holds its duals and the entries that moved from the optimum;
    # the check proves the end from those alone, and a whole certificate per end,
    # checked by the verifier, is the definition: the verdicts must agree
    from exactlp.analysis import ranges
    from exactlp.report_check import check_report
    from exactlp.reports import ranges_report

    m = model_from_text(text) if "\n" in text else exactlp.load(CASES / f"{text}.yaml")
    rep = ranges_report(m, ranges(m))
    # and the same report in layout 2, each end's whole nonzero duals (as an end
    # solved with the held row gives them): the check's other way in
    for doc in (rep, _as_layout_2(rep)):
        assert check_report(m, doc).valid and _ranges_proven_the_long_way(m, doc)
        verdicts = []
        for bad in _ranges_tampered(doc):
            got = check_report(m, bad)
            assert got.valid == _ranges_proven_the_long_way(m, bad), (got.failure, bad["ranges"])
            verdicts.append(got.valid)
        assert verdicts.count(False) >= len(verdicts) // 3


def _as_layout_2(rep: dict) -> dict:
    """A ranges report with every face proof (``face_duals`` u, ``held_dual`` w)
    written as layout 2 writes an end: its nonzero duals ``u - w y*``, ``w`` on
    the held row."""
    import copy

    from exactlp.numbers import format_number, parse_number as P

    doc = copy.deepcopy(rep)
    doc["format"] = "exactlp-report/2"
    ys = {k: P(v) for k, v in rep["certificate"]["duals"].items()}
    faces = 0
    for e in doc["ranges"].values():
        for proof in (e.get("proofs") or {}).values():
            if "face_duals" in proof:
                u, w = {k: P(v) for k, v in proof.pop("face_duals").items()}, P(proof.pop("held_dual"))
                duals = {k: u.get(k, F(0)) - w * ys.get(k, F(0)) for k in [*ys, *u]}
                duals[rep["fixed_objective"]["name"]] = w
                proof["duals"] = {k: format_number(v) for k, v in duals.items() if v}
                faces += 1
    assert faces or not any(e["method"] == "solved" for e in rep["ranges"].values())
    return doc


@settings(max_examples=150, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(lp_models(max_vars=5, max_rows=4))
def test_ranges_solved_on_the_optimal_face_are_proven_for_the_held_row(model):
    # analysis.ranges solves each probe on the optimal face (pins instead of the
    # held row) and lifts the result to the model with the held row: every end
    # must pass the verifier as a whole certificate of that model, with the value
    # the held row's own probe finds, and the lift must not fall back everywhere
    from exactlp import analysis
    from exactlp.floatlp import BasisHint
    from exactlp.solver import ObjectiveProbes

    r = exactlp.solve(model, warm_start=False)
    if r.status.value != "optimal":
        return
    with calls_recorded(analysis, "_lift_face_end") as lifted:
        rg = analysis.ranges(model, warm_start=False)
    assert all(lifted)
    held = ObjectiveProbes(rg.fixed_model, BasisHint.of_result(r, len(model.variables), len(model.constraints),
                                                                added_rows=1))
    for name, ends in rg.endpoints.items():
        for (probe, got), want in zip(ends, (rg.ranges[name].minimum, rg.ranges[name].maximum)):
            assert exactlp.verify(probe, exactlp.build_certificate(probe, got)).valid
            # the basis by position names what the basis by name holds, the held
            # row's logical last (by position: the probe's last column)
            named = [v.name for v in probe.variables] + [c.name for c in probe.constraints]
            assert set(got.basis) <= {named[j] for j in got.basis_columns}
            assert got.basis_columns[-1] == len(named) - 1 and got.basis[-1] == named[-1]
            own = held.solve(probe)
            assert got.status == own.status and got.objective == own.objective and got.objective == want
            if want is not None:
                assert type(want) is F and got.duals[probe.constraints[-1].name] is not None



def test_a_lifted_end_takes_the_held_rows_dual_nearest_zero_by_hand():
    # maximize x0 + x1 over [0, 2]^2 with r0: 5/2 x0 + 5/2 x1 <= 15/2: the optimum
    # 3 rests on r0's upper side with dual y* = 2/5, and the optimal set is
    # x0 + x1 = 3, each from 1 to 2.  Minimising x0 on the face (r0 pinned at
    # 15/2), x0 = 1 is basic, so 1 = 5/2 u: the face's dual u = 2/5, the sign a
    # lower side wants; the model's r0 rests on its upper side, where a minimum
    # needs a dual <= 0.  The lift takes the held row's dual w with
    # u - w y* <= 0, w >= u / y* = 1, and the nearest 0 is w = 1: r0's dual 0,
    # and e_x0 - 1 (x0 + x1) leaves x1, at its upper bound, the reduced cost -1.
    # (w = u y* = 4/25 would leave r0 the dual 2/5 - 8/125 > 0: no proof.)
    from exactlp.analysis import VarRange, ranges
    from exactlp.report_check import check_report
    from exactlp.reports import ranges_report

    m = model_from_text("maximize: x0 + x1\nvariables: {x0: {upper: 2}, x1: {upper: 2}}\n"
                        "constraints:\n  r0: 5/2 x0 + 5/2 x1 <= 15/2\n")
    rg = ranges(m)
    assert rg.ranges == {"x0": VarRange(F(1), F(2), "solved"), "x1": VarRange(F(1), F(2), "solved")}
    held = rg.fixed_model.constraints[-1].name
    for name, other in (("x0", "x1"), ("x1", "x0")):
        (low_probe, low), (high_probe, high) = rg.endpoints[name]
        assert dict(low.duals) == {"r0": 0, held: 1} and dict(low.reduced_costs) == {name: 0, other: -1}
        assert dict(low.primal) == {name: 1, other: 2}
        assert dict(high.duals) == {"r0": 0, held: 0} and dict(high.primal) == {name: 2, other: 1}
        for probe, end in rg.endpoints[name]:
            assert exactlp.verify(probe, exactlp.build_certificate(probe, end)).valid
    v = check_report(m, ranges_report(m, rg))
    assert v.valid, v.failure


def test_a_lifted_end_on_a_lower_side_by_hand():
    # minimize -x0 + x1 over [0, 2] x [0, 1] with r0: -2 x0 + 2 x1 >= -2: the
    # optimum -1 rests on r0's lower side with dual y* = 1/2, and the optimal set
    # is x0 = 1 + x1.  Minimising x0 on the face (r0 pinned at -2), x0 = 1 is
    # basic, so 1 = -2 u: u = -1/2, below the 0 a lower side needs in a minimum.
    # So u - w y* >= 0, w <= u / y* = -1, and the nearest 0 is w = -1: r0's dual
    # 0, the held row's -1, and x1, at its lower bound, the reduced cost 1.
    from exactlp.analysis import VarRange, ranges
    from exactlp.report_check import check_report
    from exactlp.reports import ranges_report

    m = model_from_text("minimize: -x0 + x1\nvariables: {x0: {upper: 2}, x1: {upper: 1}}\n"
                        "constraints:\n  r0: -2 x0 + 2 x1 >= -2\n")
    rg = ranges(m)
    assert rg.result.duals == {"r0": F(1, 2)}
    assert rg.ranges == {"x0": VarRange(F(1), F(2), "solved"), "x1": VarRange(F(0), F(1), "solved")}
    held = rg.fixed_model.constraints[-1].name
    (_, low), _ = rg.endpoints["x0"]
    assert dict(low.primal) == {"x0": 1, "x1": 0}
    assert dict(low.duals) == {"r0": 0, held: -1} and dict(low.reduced_costs) == {"x0": 0, "x1": 1}
    for ends in rg.endpoints.values():
        for probe, end in ends:
            assert exactlp.verify(probe, exactlp.build_certificate(probe, end)).valid
    v = check_report(m, ranges_report(m, rg))
    assert v.valid, v.failure


@pytest.mark.parametrize("row, y", [("-x - y = -4", -1), ("x + y = 4", 1)])
def test_a_pinned_equality_leaves_the_held_rows_dual_at_zero_by_hand(row, y):
    # maximize x + y over [0, 3]^2 with the equality x + y = 4, written either
    # way (dual y* = -1 or 1): the optimal set is x + y = 4, each from 1 to 3.
    # Minimising x on the face, x = 1 is basic, so 1 = y* u: the face's dual
    # u = y* on the equality, whose multiplier may take any sign in the model
    # too; no side is broken, so the held row's dual stays 0 and the end's
    # duals are the face's own
    from exactlp.analysis import VarRange, ranges

    m = model_from_text(f"maximize: x + y\nvariables: {{x: {{upper: 3}}, y: {{upper: 3}}}}\n"
                        f"constraints:\n  eq: {row}\n")
    rg = ranges(m)
    assert rg.result.duals == {"eq": y}
    assert rg.ranges == {"x": VarRange(F(1), F(3), "solved"), "y": VarRange(F(1), F(3), "solved")}
    held = rg.fixed_model.constraints[-1].name
    for name, other in (("x", "y"), ("y", "x")):
        (_, low), (_, high) = rg.endpoints[name]
        assert dict(low.duals) == {"eq": y, held: 0} and dict(low.reduced_costs) == {name: 0, other: -1}
        assert dict(high.duals) == {"eq": 0, held: 0} and dict(high.reduced_costs) == {name: 1, other: 0}
        for probe, end in rg.endpoints[name]:
            assert exactlp.verify(probe, exactlp.build_certificate(probe, end)).valid


def test_ranges_says_each_variable_it_solves_for():
    from exactlp.analysis import ranges

    said = []
    ranges(exactlp.load(CASES / "shares_historic.yaml"), progress=said.append)
    names = ["p1", "p3", "p5"] + [f"objective.abs{i}" for i in range(1, 6)]
    assert said == [f"ranges: '{n}', {i} of 8 to solve (two exact solves each)" for i, n in enumerate(names, 1)]
    said = []
    ranges(exactlp.load(CASES / "berth.yaml"), progress=said.append)  # a unique optimum: nothing to solve
    assert said == []


def test_moved_entries_of_the_same_numerator_are_moved_by_hand():
    # maximize x + y over [0, 1/2]^2 with cap: x + y <= 5/6: the optimum 5/6 is
    # found at x = 1/3, y = 1/2, and each variable ranges over [1/3, 1/2]; the
    # end x = 1/2, y = 1/3 moves both, each to a value with the same numerator
    # as its old one, so the entries that moved are told by their denominators
    # too.  One solve for the optimum and two for each variable: 5.
    from exactlp.analysis import VarRange, ranges
    from exactlp.report_check import check_report
    from exactlp.reports import ranges_report

    m = model_from_text("maximize: x + y\nvariables: {x: {upper: 1/2}, y: {upper: 1/2}}\n"
                        "constraints:\n  cap: x + y <= 5/6\n")
    rg = ranges(m)
    assert rg.result.primal == {"x": F(1, 3), "y": F(1, 2)} and rg.solves == 5
    assert rg.ranges == {"x": VarRange(F(1, 3), F(1, 2), "solved"), "y": VarRange(F(1, 3), F(1, 2), "solved")}
    rep = ranges_report(m, rg)
    assert rep["ranges"]["x"]["proofs"] == {
        "min": {"moved": {}, "face_duals": {"cap": "1"}, "held_dual": "1"},
        "max": {"moved": {"x": "1/2", "y": "1/3"}, "face_duals": {}, "held_dual": "0"}}
    assert rep["ranges"]["y"]["proofs"] == {
        "min": {"moved": {"x": "1/2", "y": "1/3"}, "face_duals": {"cap": "1"}, "held_dual": "1"},
        "max": {"moved": {}, "face_duals": {}, "held_dual": "0"}}
    v = check_report(m, rep)
    assert v.valid, v.failure


@pytest.mark.parametrize("chosen, unique, proof, solves", [
    (["z"], False, "undecided: only some variables were ranged, and all of those have zero width", 1),
    (["x"], False, "some variables take different values in different optimal solutions", 3),
    (None, False, "some variables take different values in different optimal solutions", 5),
])
def test_uniqueness_is_claimed_only_when_proven(chosen, unique, proof, solves):
    # x + y = 4 is optimal for x, y in [1, 3]; z = 2 is decided by its reduced
    # cost.  Ranging z alone proves nothing either way: the optimum is not called
    # unique, and the report check refuses a report that says it is
    from exactlp.analysis import ranges
    from exactlp.report_check import check_report
    from exactlp.reports import ranges_report

    m = model_from_text("maximize: x + y + z\nvariables: {x: {upper: 3}, y: {upper: 3}, z: {upper: 2}}\n"
                        "constraints:\n  cap: x + y <= 4\n")
    rg = ranges(m, chosen)
    assert (rg.unique, rg.proof, rg.solves) == (unique, proof, solves)
    rep = ranges_report(m, rg)
    assert check_report(m, rep).valid
    rep["unique"] = True
    v = check_report(m, rep)
    assert not v.valid and v.failure.detail == "unique: neither the duals nor the ranges prove the optimum unique"


def test_the_held_row_takes_a_name_no_constraint_has():
    # the objective held at its optimum is the row 'optimal_objective', with a
    # '_' added for each constraint of the model that already has the name
    from exactlp.analysis import ranges
    from exactlp.report_check import check_report
    from exactlp.reports import ranges_report

    text = ALTERNATIVE + "  optimal_objective: x <= 3\n  optimal_objective_: y <= 3\n"
    m = model_from_text(text)
    rg = ranges(m)
    held = rg.fixed_model.constraints[-1]
    assert held.name == "optimal_objective__" and (held.lower, held.upper) == (F(4), F(4))
    assert [c.name for c in rg.fixed_model.constraints] == ["cap", "optimal_objective", "optimal_objective_",
                                                            "optimal_objective__"]
    rep = ranges_report(m, rg)
    assert rep["fixed_objective"] == {"name": "optimal_objective__", "value": "4"}
    v = check_report(m, rep)
    assert v.valid, v.failure


@pytest.mark.parametrize("text", [ALTERNATIVE, UNBOUNDED_SET, "shares_historic"])
def test_ranges_solved_with_the_held_row_when_the_face_cannot_be_used(text, monkeypatch):
    # when the optimum's multipliers give the optimal face no pins of one sign
    # (_face_pins says None), each end is solved on the model with the held row
    # instead: the same ranges, each end's proof its own nonzero duals (no
    # face_duals), and the report check and the whole certificates agree on it
    from exactlp import analysis
    from exactlp.report_check import check_report
    from exactlp.reports import ranges_report

    m = model_from_text(text) if "\n" in text else exactlp.load(CASES / f"{text}.yaml")
    lifted = analysis.ranges(m)
    monkeypatch.setattr(analysis, "_face_pins", lambda model, r: None)
    with calls_recorded(analysis, "_lift_face_end") as tried:
        held = analysis.ranges(m)
    assert tried == []
    assert held.ranges == lifted.ranges and held.unique == lifted.unique and held.solves == lifted.solves
    rep = ranges_report(m, held)
    proofs = [p for e in rep["ranges"].values() for p in (e.get("proofs") or {}).values()]
    assert proofs and not any("face_duals" in p or "held_dual" in p for p in proofs)
    assert all(("ray" in p) != ("duals" in p and "moved" in p) for p in proofs)
    assert check_report(m, rep).valid and _ranges_proven_the_long_way(m, rep)
    for bad in _ranges_tampered(rep):
        assert check_report(m, bad).valid == _ranges_proven_the_long_way(m, bad)


_SMALL = st.sampled_from([F(0), F(0), F(0), F(1), F(-1), F(2), F(-1, 3), F(5, 2)])


@st.composite
def _boxed_models(draw):
    """Feasible models (each row's sides set around its activity at the lower
    corner, a side sometimes absent), most variables boxed: most have an optimum,
    and most multipliers rest on finite sides.  Sides are halves and thirds too,
    so that the check's common denominator of the sides is not always 1."""
    small = st.sampled_from([0, 0, 1, -1, 2, -3])
    part = st.sampled_from([1, 1, 2, 3])
    n = draw(st.integers(1, 5))
    low = [F(draw(st.integers(-2, 1)), draw(part)) for _ in range(n)]
    lines = ["minimize: " + " + ".join(f"{draw(small)} x{j}" for j in range(n)), "variables:"]
    lines += [f"  x{j}: {{lower: {lo}" + ("}" if draw(st.integers(0, 4)) == 0 else
                                         f", upper: {lo + draw(st.integers(0, 3))}}}") for j, lo in enumerate(low)]
    lines.append("constraints:")
    for i in range(draw(st.integers(1, 4))):
        a = [draw(small) for _ in range(n)]
        at = sum(k * lo for k, lo in zip(a, low))
        lo, hi = (None if draw(st.integers(0, 2)) == 0 else at + sign * F(draw(st.integers(0, 2)), draw(part))
                  for sign in (-1, 1))
        lo = at if lo is None and hi is None else lo
        body = " + ".join(f"{k} x{j}" for j, k in enumerate(a))
        lines.append(f"  r{i}: " + (f"{body} == {at}" if lo == hi == at else f"{body} >= {lo}" if hi is None else
                                    f"{body} <= {hi}" if lo is None else f"{lo} <= {body} <= {hi}"))
    return model_from_text("\n".join(lines) + "\n")


_PRIMES = [3, 5, 7, 11, 13, 17, 19, 23, 29, 31, 37, 41, 43, 47, 53, 59, 61, 67, 71, 73, 79, 83, 89, 97]


@pytest.mark.parametrize("short", [True, False], ids=["one denominator", "many primes"])
def test_the_report_checks_products_are_a_and_its_transpose_times_the_vector(short):
    # report_check._Matrix sums A v and A^T w over common denominators (the
    # vector's, each column's or row's), or keeps Fractions where such a
    # denominator would be long (many different primes: each row of 24 columns
    # over 24 primes, a vector over 23): both ways must give the products as
    # defined, summed here entry by entry, and the first way whole numbers
    from exactlp.report_check import _Matrix, _whole

    n, k = 24, 6
    den = (lambda j: 2) if short else (lambda j: _PRIMES[j])  # column j's coefficients over den(j)
    rows = [f"  r{i}: " + " + ".join(f"{F((i + j) % 5 - 2, den(j))} x{j}" for j in range(n)
                                      if (i + j) % 5 != 2) + " <= 1" for i in range(k)]
    m = model_from_text("minimize: x0\nvariables: {" + ", ".join(f"x{j}: {{}}" for j in range(n)) + "}\n"
                        "constraints:\n" + "\n".join(rows) + "\n")
    v = {f"x{j}": F(j - 7, 4 if short else _PRIMES[-1 - j]) for j in range(n) if j != 7}
    w = {f"r{i}": F(2 * i - 5, 2 if short else _PRIMES[i]) for i in range(k)}
    mat = _Matrix(m)
    a_v = {c.name: sum((a * v.get(x, 0) for x, a in c.terms), F(0)) for c in m.constraints}
    at_w = {x.name: sum((a * w[c.name] for c in m.constraints for y, a in c.terms if y == x.name), F(0))
            for x in m.variables}
    wholes = {}
    for product, whole, vec, want in ((mat.times, mat.times_whole, v, a_v), (mat.t_times, mat.t_times_whole, w, at_w)):
        got = product(vec)
        assert {o: g for o, g in got.items() if g} == {o: g for o, g in want.items() if g}
        assert all(type(g) is F for g in got.values())
        entries, common = wholes[product.__name__] = whole(vec)
        assert {o: F(t) / common for o, t in entries.items() if t} == {o: g for o, g in want.items() if g}
        assert all(type(t) is int for t in entries.values()) == short
    # the vectors as whole numbers over their least common denominator (w's six
    # primes: 3 * 5 * 7 * 11 * 13 * 17), or as they are (v's 23 primes)
    for vec, lcd in ((v, 4 if short else None), (w, 2 if short else 255255)):
        entries, common = _whole(vec)
        assert {o: F(t) / common for o, t in entries.items()} == vec
        assert (common, all(type(t) is int for t in entries.values())) == ((1, False) if lcd is None else (lcd, True))
    # and a sum of products, over their common denominator or (long) as Fractions
    from exactlp.report_check import _dot, _fsum

    pairs = [(a, v.get(x, F(0))) for c in m.constraints for x, a in c.terms]
    assert _dot(pairs) == sum((a * b for a, b in pairs), F(0)) and type(_dot(pairs)) is F
    assert _fsum(v.values()) == sum(v.values(), F(0)) and type(_fsum(v.values())) is F
    if not short:  # each way of keeping Fractions was taken: the rows' scales, A^T w's common one
        assert set(mat._by_cols[1].values()) == {None} and wholes["t_times"][1] == 1


@settings(max_examples=300, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(_boxed_models(), st.data())
def test_the_ranges_check_sums_each_end_as_its_definition_does(model, data):
    # the check sums an end's dual objective from u = y + y_h y* and shared sums
    # (report_check._Held); the definition forms d = e_name - A^T y - y_h c in full
    # and takes each term: for any duals (short u as the face gives, or arbitrary),
    # either both give the same exact total, or both refuse a term on an infinite side
    from exactlp.report_check import _Bad, _dual_total_by_terms, _Held, _Matrix

    r = exactlp.solve(model, warm_start=False)
    if r.status.value != "optimal":
        assert r.status.value == "unbounded"
        return
    cert = exactlp.build_certificate(model, r)
    ys, ds, act = ({k: parse_number(v) for k, v in cert[key].items()}
                   for key in ("duals", "reduced_costs", "activities"))
    mat = _Matrix(model)
    shared = _Held(mat, ys, ds, act)
    rows = [c.name for c in model.constraints]
    yh = data.draw(_SMALL)
    u = {k: v for k in rows if data.draw(st.integers(0, 2)) == 0 and (v := data.draw(_SMALL))}
    y = ({k: v for k in rows if (v := u.get(k, 0) - yh * ys.get(k, 0))} if data.draw(st.booleans())
         else {k: v for k in rows if (v := data.draw(_SMALL))})
    name = data.draw(st.sampled_from([v.name for v in model.variables]))
    sp, held = data.draw(st.sampled_from([1, -1])), data.draw(_SMALL)
    try:
        want = _dual_total_by_terms(mat, y, yh, name, sp, held, "held", "end")
    except _Bad:
        want = None
    u = shared.face_duals(y, yh)  # u = y + y_h y*: what a face proof gives
    assert shared.duals(u, yh) == {k: v for k, v in y.items() if v}
    got = shared.dual_total(u, yh, name, sp, held)
    assert got == want and (got is None or type(got) is F)


@pytest.mark.parametrize("kind", ["ScaledMap", "OffsetMap"])
@settings(max_examples=300, deadline=None, derandomize=True)
@given(st.lists(st.sampled_from("abcdefgh"), unique=True, max_size=8), st.data())
def test_a_derived_map_is_the_dict_it_stands_for(kind, keys, data):
    # ScaledMap: own[k] where given, else scale * base[k] (0 where base lacks k);
    # OffsetMap: own[k] + scale * base[k] (each term 0 where its map lacks k).
    # Every way of reading either must give that dict, in key order, as
    # Fractions; offsets_from gives own's offsets back for its own base only
    from exactlp.solver import result

    keys = {k: None for k in keys}
    base = {k: v for k in [*keys, "held"] if data.draw(st.booleans()) for v in [data.draw(_SMALL)]}
    own = {k: v for k in keys if data.draw(st.booleans()) for v in [data.draw(_SMALL)]}
    scale = data.draw(st.sampled_from([F(1), F(0), F(-2, 3), F(5)]))
    if kind == "ScaledMap":
        want = {k: own[k] if k in own else scale * base.get(k, F(0)) for k in keys}
        offsets = {k: v - scale * base[k] if k in base else v for k, v in own.items()}
    else:
        want = {k: own.get(k, F(0)) + scale * base.get(k, F(0)) for k in keys}
        offsets = own
    m = getattr(result, kind)(keys, own, base, scale)
    assert dict(m) == want and list(m) == list(want) and len(m) == len(want) and m == want
    assert all(type(m[k]) is F for k in keys) and all(type(v) is F for v in m.values())
    assert result.nonzero_entries(m) == {k: v for k, v in want.items() if v} and list(
        result.nonzero_entries(m)) == [k for k, v in want.items() if v]
    other = {k: data.draw(_SMALL) for k in keys}
    assert result.entries_differing(m, other) == {k: v for k, v in want.items() if v != other[k]}
    if kind == "ScaledMap" and scale == 1:
        assert result.entries_differing(m, base | {k: F(7) for k in keys if k not in base}) == {
            k: v for k, v in want.items() if v != base.get(k, F(7))}
    got = result.offsets_from(m, base)
    assert got == offsets and got is not own and result.offsets_from(m, dict(base)) is None
    if kind == "ScaledMap":  # base itself with entries of its own: that very map, at scale 1
        assert m.based_on(base) is (scale == 1) and m.based_on(dict(base)) is False and dict(m.own) == own
    assert repr(m) == f"{kind}({want!r})"
    with pytest.raises(KeyError):
        m["z"]


def test_range_ends_keep_their_own_entries_and_share_the_optimums():
    # each lifted end (analysis._lift_face_end) keeps the entries where it differs
    # from the optimum (point, activities) or where the face's duals are nonzero,
    # and shares the rest; on a generated network that is a small part of a whole
    # result (the 1,000-row network's ends took 2.2 GB whole), and each end is
    # still the whole result the verifier accepts
    from exactlp.analysis import ranges
    from exactlp.solver.result import OffsetMap, ScaledMap

    from .helpers import network

    m = network(20, 30)
    rg = ranges(m, [v.name for v in m.variables][:60], warm_start=False)
    kept = whole = 0
    for ends in rg.endpoints.values():
        for probe, got in ends:
            maps = (got.primal, got.activities, got.duals, got.reduced_costs)
            assert [type(mp) for mp in maps] == [ScaledMap, ScaledMap, OffsetMap, OffsetMap]
            kept += sum(len(mp._own) for mp in maps)
            whole += sum(len(mp) for mp in maps)
            assert exactlp.verify(probe, exactlp.build_certificate(probe, got)).valid
    assert len(rg.endpoints) >= 10 and kept * 10 < whole, (len(rg.endpoints), kept, whole)


_REFUSALS = """
import exactlp
from exactlp.analysis import ranges, sensitivity
from exactlp.report_check import check_report
from exactlp.reports import ranges_report, sensitivity_report
from tests.test_analysis import _ranges_tampered, _tampered
for case in ("drought", "berth", "emissions", "grants", "shares_historic"):
    m = exactlp.load(f"cases/{case}.yaml")
    for bad in (_tampered(sensitivity_report(m, sensitivity(m)))
                + _ranges_tampered(ranges_report(m, ranges(m)))):
        v = check_report(m, bad)
        print(v.valid, None if v.valid else v.failure.detail)
"""


def test_a_faulty_report_is_refused_in_the_same_words_under_any_string_hashing():
    # the check names the first fault it meets; it visited the entries of a
    # sensitivity end in the order of a set of names, which follows the
    # interpreter's string hashing: under PYTHONHASHSEED 1 and 2,
    # rhs_ranges.berth_hours.lower of a changed berth report was refused naming
    # 'share_a_min' and 'berth_hours'.  The same reports, the same words.
    import os
    import subprocess
    import sys

    from .conftest import ROOT

    outs = [subprocess.run([sys.executable, "-c", _REFUSALS], cwd=ROOT, capture_output=True, text=True, check=True,
                           env={**os.environ, "PYTHONHASHSEED": seed}).stdout for seed in ("1", "2")]
    assert outs[0] == outs[1] and outs[0].count("False ") >= 300

def test_a_variable_without_end_over_the_optimal_set_is_proven_by_a_ray():
    from exactlp.analysis import ranges
    from exactlp.report_check import check_report
    from exactlp.reports import ranges_report

    m = model_from_text(UNBOUNDED_SET)
    rep = ranges_report(m, ranges(m))
    assert rep["ranges"]["y"]["max"] is None and rep["ranges"]["y"]["proofs"]["max"] == {"ray": {"y": "1"}}
    assert check_report(m, rep).valid
    for ray, message in (({"y": "-1"}, "ranges.y.max: the ray runs into a bound of 'y'"),
                         ({"x": "1", "y": "1"}, "ranges.y.max: the ray changes the held objective"),
                         ({}, "ranges.y.max: the ray does not move 'y' the improving way")):
        rep["ranges"]["y"]["proofs"]["max"]["ray"] = ray
        assert check_report(m, rep).failure.detail == message


def _report_kinds():
    """One row per report whose check works from sparse proofs: how to write it,
    how to change one claim in it, and the proof by whole certificates."""
    from exactlp.analysis import ranges
    from exactlp.reports import ranges_report, sensitivity_report

    return {"sensitivity": (lambda m: sensitivity_report(m, sensitivity(m)), _tampered, _proven_the_long_way),
            "ranges": (lambda m: ranges_report(m, ranges(m)), _ranges_tampered, _ranges_proven_the_long_way)}


@pytest.mark.parametrize("kind", ["sensitivity", "ranges"])
@settings(max_examples=60, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(model=lp_models(max_vars=4, max_rows=4))
def test_report_checks_agree_with_whole_certificates_on_random_models(kind, model):
    from exactlp.report_check import check_report

    if exactlp.solve(model).status.value != "optimal":
        return
    write, tamper, long_way = _report_kinds()[kind]
    rep = write(model)
    assert check_report(model, rep).valid and long_way(model, rep)
    for bad in tamper(rep)[:40]:
        assert check_report(model, bad).valid == long_way(model, bad)


@settings(max_examples=200, deadline=None, derandomize=True)
@given(st.integers(1, 5), st.lists(st.lists(st.sampled_from([F(0), F(0), F(1), F(-1), F(2), F(1, 3), F(-5, 2)]),
                                            min_size=5, max_size=5), min_size=0, max_size=7))
def test_the_uniqueness_rank_agrees_with_sympy(n, table):
    # reference: SymPy's exact Matrix.rank; the modular test may only say yes
    # when the rank is full, and the whole test must agree with SymPy either way
    import sympy

    from exactlp.report_check import _full_rank, _full_rank_mod

    names = [f"v{k}" for k in range(n)]
    rows = [{names[k]: a for k, a in enumerate(r[:n]) if a} for r in table]
    full = bool(table) and sympy.Matrix([[sympy.Rational(a.numerator, a.denominator) for a in r[:n]]
                                         for r in table]).rank() == n
    assert _full_rank(rows, names) == full == _full_rank_mod(rows, names, None)
    assert not _full_rank_mod(rows, names) or full
    # a prime that divides a minor says no where the rank is full: the exact step decides
    assert _full_rank([{"a": F(1), "b": F(1)}, {"a": F(1), "b": F(8)}], ["a", "b"])
    assert not _full_rank_mod([{"a": F(1), "b": F(1)}, {"a": F(1), "b": F(8)}], ["a", "b"], p=7)


def _chain(n: int):
    """x_k <= (997/3) x_(k-1), x_0 <= 1, the last maximised: the optimum is
    (997/3)^k, and its values and directions run to hundreds of digits."""
    lines = [f"maximize: x{n - 1}", "variables:", "  x0: {lower: 0, upper: 1}"]
    lines += [f"  x{k}: {{lower: 0}}" for k in range(1, n)] + ["constraints:"]
    lines += [f"  r{k}: 3 x{k + 1} - 997 x{k} <= 0" for k in range(n - 1)]
    return model_from_text("\n".join(lines) + "\n")


def test_reports_with_numbers_as_long_as_a_certificates_check():
    # a model's own numbers are capped at 400 characters, a certificate's at
    # 200,000: a report holds the latter kind, and so does its check
    import copy

    from exactlp.analysis import ranges
    from exactlp.report_check import check_report
    from exactlp.reports import ranges_report, sensitivity_report

    m = _chain(130)
    rep = sensitivity_report(m, sensitivity(m))
    assert len(rep["certificate"]["primal"]["x129"]) > 400
    assert check_report(m, rep).valid
    assert check_report(m, ranges_report(m, ranges(m))).valid
    bad = copy.deepcopy(rep)
    bad["rhs_ranges"]["r0"]["allocation_direction"]["x1"] = "7" * 200_001
    assert check_report(m, bad).failure.detail == ("rhs_ranges.r0.allocation_direction.x1: not an exact number: "
                                                   "'7777777777777777777777777777777777777777'... (200,001 characters)")


_GARBAGE = st.one_of(st.none(), st.booleans(), st.integers(), st.text(max_size=8),
                     st.sampled_from(["1/0", "-", "1e999999", "x", "0", "1", "-1/3", "9" * 500]),
                     st.lists(st.text(max_size=3), max_size=3), st.dictionaries(st.text(max_size=3), st.text(max_size=3), max_size=3))


def _paths(doc, here=()):
    if here:
        yield here
    if isinstance(doc, dict):
        for k, v in doc.items():
            yield from _paths(v, here + (k,))


@pytest.mark.parametrize("kind", ["sensitivity", "ranges", "conflict"])
@settings(max_examples=150, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_a_report_with_garbage_anywhere_is_refused_with_a_reason_not_an_error(kind, data):
    # any node of a report replaced by garbage: the check answers (valid or not,
    # with the reason), never raises (3,000 inputs a kind passed once, unseeded)
    import copy

    from exactlp.analysis import ranges
    from exactlp.report_check import check_report
    from exactlp.reports import conflict_report, ranges_report, sensitivity_report

    m = exactlp.load(CASES / ("grants_overcommitted.yaml" if kind == "conflict" else "grants.yaml"))
    rep = {"sensitivity": lambda: sensitivity_report(m, sensitivity(m)), "ranges": lambda: ranges_report(m, ranges(m)),
           "conflict": lambda: conflict_report(m, conflict(m))}[kind]()
    path = data.draw(st.sampled_from(sorted(_paths(rep), key=repr)))
    bad = copy.deepcopy(rep)
    node = bad
    for key in path[:-1]:
        node = node[key]
    node[path[-1]] = data.draw(_GARBAGE)
    got = check_report(m, bad)
    assert got.valid or got.failure.detail
    assert check_report(m, [rep]).failure.detail == "expected a mapping at the top of the report"

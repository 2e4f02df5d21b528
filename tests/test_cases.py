"""The worked cases in cases/ (issue 5): each solves, verifies, and has its
objective confirmed by a hand derivation or a second method."""

from fractions import Fraction as F
import importlib.util

import pytest

import exactlp
from exactlp.certificate import build_certificate

from .conftest import CASES
from .helpers import scipy_solve, solve_verified, sympy_solve


def case(name):
    return exactlp.load(CASES / name)


@pytest.mark.parametrize(
    "name, objective",
    [("drought.yaml", F(257335, 8)), ("grants.yaml", F(9917, 100)), ("berth.yaml", F(1186, 3)),
     ("emissions.yaml", F(5338, 625))],
)
def test_optimal_cases_agree_with_sympy_exactly(name, objective):
    m = case(name)
    r = solve_verified(m)
    assert r.status.value == "optimal" and r.objective == objective
    assert sympy_solve(m) == ("optimal", objective)


def test_emissions_by_hand():
    # 1195 - 1020 = 175 kt must be abated.  Cheapest first: c (0.027) to its limit 40,
    # a (0.031) to 80; d must abate its minimum 7.6; b (0.044) takes the rest, 47.4.
    # Cost 0.027*40 + 0.031*80 + 0.044*47.4 + 0.052*7.6 + 2.5 = 8.5408 = 5338/625.
    r = solve_verified(case("emissions.yaml"))
    assert dict(r.primal) == {"abate_a": F(80), "abate_b": F(474, 10), "abate_c": F(40), "abate_d": F(76, 10)}
    assert r.objective == F(27, 1000) * 40 + F(31, 1000) * 80 + F(44, 1000) * F(474, 10) + F(52, 1000) * F(76, 10) + F(5, 2)
    assert r.duals["zone_cap"] == F(-44, 1000)  # one more kt of cap saves plant b's cost


def test_overcommitted_grants_farkas_by_hand():
    # north >= 3.5, coast >= 4, uplands >= 1.5, metro >= 2 add to >= 11, but the fund is <= 10.
    m = case("grants_overcommitted.yaml")
    r = solve_verified(m)
    assert r.status.value == "infeasible"
    assert dict(r.farkas_rows) == {"fund": F(-1), "uplands_floor": F(1), "metro_floor": F(1)}
    assert dict(r.farkas_bounds) == {"north": F(1), "coast": F(1)}
    assert build_certificate(m, r)["farkas"]["rhs"] == "1"
    assert sympy_solve(m)[0] == "infeasible"


def test_forgotten_cap_ray_points_at_the_swap():
    m = case("pipeline_forgotten_cap.yaml")
    r = solve_verified(m)
    assert r.status.value == "unbounded"
    assert dict(r.ray) == {"swap": F(1)}
    assert sympy_solve(m)[0] == "unbounded"


def test_generated_network_against_scipy():
    m = case("generated/water_network.yaml")
    assert len(m.variables) >= 200
    r = solve_verified(m)
    status, obj = scipy_solve(m)
    assert (r.status.value, status) == ("optimal", "optimal")
    assert abs(float(r.objective) - obj) <= 1e-9 * abs(obj)


def test_generated_network_file_matches_its_script():
    path = CASES / "generated" / "make_network.py"
    spec = importlib.util.spec_from_file_location("make_network", path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    assert mod.build() == (CASES / "generated" / "water_network.yaml").read_text()


def test_every_case_is_described():
    for p in sorted(CASES.rglob("*.yaml")):
        head = p.read_text().splitlines()[0]
        assert head.startswith("#"), p

"""Certificates and the independent verifier (issue 4).

Every outcome of the solver's test models carries a certificate that the
verifier accepts; every single-number mutation, dropped entry, status change
and model edit is rejected with a message naming what failed.
"""

import ast
import copy
from fractions import Fraction as F
from pathlib import Path

import pytest

import exactlp
from exactlp.certificate import build_certificate, dump_certificate, parse_certificate_text
from exactlp.io import model_from_text
from exactlp.model import Constraint, Model
from exactlp.numbers import format_number, parse_number
from exactlp.verifier import verify

from .helpers import leaf_paths
from .models import KNOWN, klee_minty

CERT_CASES = [(k[0], k[1]) for k in KNOWN] + [("klee-minty-3", klee_minty(3))]


def certificate_for(text):
    m = model_from_text(text)
    r = exactlp.solve(m)
    return m, build_certificate(m, r)


@pytest.mark.parametrize("name, text", CERT_CASES)
@pytest.mark.parametrize("fmt", ["yaml", "json"])
def test_every_outcome_has_an_accepted_certificate(name, text, fmt):
    m, cert = certificate_for(text)
    back = parse_certificate_text(dump_certificate(cert, fmt), "<cert>")
    assert back == cert
    v = verify(m, back)
    assert v.valid, v.failure
    assert v.status == cert["status"]


def test_optimal_certificate_by_hand():
    # three-resource example: x = (2, 0, 1), y = (1, 0, 1); dual objective 5*1 + 11*0 + 8*1 = 13
    m, cert = certificate_for(KNOWN[0][1])
    assert cert["status"] == "optimal" and cert["objective"] == "13" and cert["dual_objective"] == "13"
    assert cert["primal"] == {"x1": "2", "x2": "0", "x3": "1"}
    assert cert["duals"] == {"r1": "1", "r2": "0", "r3": "1"}
    assert cert["reduced_costs"] == {"x1": "0", "x2": "-3", "x3": "0"}
    assert cert["activities"] == {"r1": "5", "r2": "10", "r3": "8"}


def test_infeasible_certificate_by_hand():
    # 1 * (x + y >= 6) - 1 * (x <= 3) - 1 * (y <= 2):  0 >= 6 - 3 - 2 = 1
    m, cert = certificate_for(KNOWN[3][1])
    assert cert["farkas"] == {"multipliers": {"need": "1"}, "bounds": {"x": "-1", "y": "-1"},
                              "constraints": ["need"], "bound_variables": ["x", "y"], "rhs": "1"}


def test_unbounded_certificate_by_hand():
    m, cert = certificate_for(KNOWN[4][1])
    assert cert["status"] == "unbounded"
    ray = {k: parse_number(v) for k, v in cert["ray"].items()}
    assert ray.get("x", F(0)) > 0 and ray.get("x", 0) - ray.get("y", 0) > 0  # objective x - y grows


def test_infeasible_certificates_leave_out_what_they_do_not_use():
    # 1 * (x >= 5) - 1 * (x <= 3): 0 >= 5 - 3 = 2; the row 'spare' and the bounds of z
    # (2 <= z <= 4) play no part, and the certificate names neither
    m, cert = certificate_for("minimize: x\nvariables: {x: {upper: 3}, z: {lower: 2, upper: 4}}\n"
                              "constraints:\n  need: x >= 5\n  spare: z <= 9\n")
    assert cert["farkas"] == {"multipliers": {"need": "1"}, "bounds": {"x": "-1"}, "constraints": ["need"],
                              "bound_variables": ["x"], "rhs": "2"}
    assert verify(m, cert).valid
    # -1 * (x <= 3) + 1 * (x >= 5), the bound now the lower side: 0 >= -3 + 5 = 2
    m, cert = certificate_for("maximize: x\nvariables: {x: {lower: 5}}\nconstraints:\n  cap: x <= 3\n")
    assert cert["farkas"] == {"multipliers": {"cap": "-1"}, "bounds": {"x": "1"}, "constraints": ["cap"],
                              "bound_variables": ["x"], "rhs": "2"}
    assert verify(m, cert).valid


def test_hand_built_valid_certificate_with_other_multipliers():
    # x + y >= 6 with x <= 3, y <= 2: doubling every multiplier is another valid proof (0 >= 2)
    m, cert = certificate_for(KNOWN[3][1])
    other = copy.deepcopy(cert)
    other["farkas"].update(multipliers={"need": "2"}, bounds={"x": "-2", "y": "-2"}, rhs="2")
    assert verify(m, other).valid


# --- mutations ------------------------------------------------------------------------------
# Entries that prove nothing (tool, model name, the notice) are left out: dropping them keeps a valid proof.
NOT_PROOF = {("tool",), ("model", "name"), ("notice",)}


def number_paths(doc):
    """The paths to the leaves that are exact numbers written as text."""
    for path in leaf_paths(doc):
        value = get(doc, path)
        if isinstance(value, str):
            try:
                parse_number(value)
            except exactlp.InputError:
                continue
            yield path


def entry_paths(doc, path=()):
    if isinstance(doc, dict):
        for k, v in doc.items():
            yield path + (k,)
            yield from entry_paths(v, path + (k,))
    elif isinstance(doc, list):
        for i, v in enumerate(doc):
            yield path + (i,)


def get(doc, path):
    for p in path:
        doc = doc[p]
    return doc


def put(doc, path, value):
    get(doc, path[:-1])[path[-1]] = value


def drop(doc, path):
    parent = get(doc, path[:-1])
    del parent[path[-1]]


MUTANTS = [lambda v: v + F(1, 1000), lambda v: v - F(1, 1000), lambda v: -v, lambda v: F(0)]


def still_a_proof(m: Model, cert: dict, path: tuple, new: F) -> bool:
    """True when the mutated certificate provably still proves its claim.

    That happens only for a primal value of a variable in no constraint, moved
    within its bounds, when the objective does not see the change either (an
    unbounded certificate needs only *some* feasible point).
    """
    if path[0] != "primal":
        return False
    name = path[1]
    if any(name in dict(c.terms) for c in m.constraints):
        return False
    if cert["status"] == "optimal" and dict(m.objective).get(name):
        return False
    v = m.variable(name)
    return (v.lower is None or new >= v.lower) and (v.upper is None or new <= v.upper)


@pytest.mark.parametrize("name, text", CERT_CASES)
def test_every_single_number_mutation_is_rejected(name, text):
    m, cert = certificate_for(text)
    tried = 0
    for path in number_paths(cert):
        if path[0] == "model" or path in NOT_PROOF:
            continue
        value = parse_number(get(cert, path))
        for mutate in MUTANTS:
            new = mutate(value)
            if new == value or still_a_proof(m, cert, path, new):
                continue  # not a mutation, or provably still a valid proof
            bad = copy.deepcopy(cert)
            put(bad, path, format_number(new))
            v = verify(m, bad)
            assert not v.valid, (path, value, new)
            assert v.failure.detail  # names what failed
            tried += 1
    assert tried > 0


@pytest.mark.parametrize("name, text", CERT_CASES)
def test_dropping_any_entry_is_rejected(name, text):
    m, cert = certificate_for(text)
    for path in entry_paths(cert):
        if path in NOT_PROOF:
            continue
        bad = copy.deepcopy(cert)
        drop(bad, path)
        v = verify(m, bad)
        assert not v.valid, path


@pytest.mark.parametrize("name, text", CERT_CASES)
def test_changing_the_status_is_rejected(name, text):
    m, cert = certificate_for(text)
    for status in ("optimal", "infeasible", "unbounded", "iteration_limit"):
        if status == cert["status"]:
            continue
        bad = dict(cert, status=status)
        assert not verify(m, bad).valid


def edited_models(m: Model):
    """Every model that differs from m in one coefficient (by +1/1000)."""
    for i, c in enumerate(m.constraints):
        for k in range(len(c.terms)):
            terms = list(c.terms)
            terms[k] = (terms[k][0], terms[k][1] + F(1, 1000))
            cons = list(m.constraints)
            cons[i] = Constraint(c.name, tuple(terms), c.lower, c.upper)
            yield Model(m.sense, m.objective, m.variables, tuple(cons), m.objective_constant, m.name)
    for k in range(len(m.objective)):
        obj = list(m.objective)
        obj[k] = (obj[k][0], obj[k][1] + F(1, 1000))
        yield Model(m.sense, tuple(obj), m.variables, m.constraints, m.objective_constant, m.name)


@pytest.mark.parametrize("name, text", CERT_CASES)
def test_editing_one_model_coefficient_is_rejected(name, text):
    m, cert = certificate_for(text)
    for edited in edited_models(m):
        v = verify(edited, cert)
        assert not v.valid
        assert v.failure.detail == (f"fingerprint: the certificate is for {m.fingerprint}, "
                                    f"the model given is {edited.fingerprint}")


def test_nearly_right_is_wrong():
    m, cert = certificate_for(KNOWN[0][1])
    bad = copy.deepcopy(cert)
    bad["primal"]["x1"] = "2000000000001/1000000000000"  # off by 1e-12
    v = verify(m, bad)
    assert not v.valid
    assert v.failure.detail == "activities.r1: stated 5, but A x gives 2500000000001/500000000000"
    bad = copy.deepcopy(cert)
    bad["duals"]["r1"] = "1000000000001/1000000000000"
    assert verify(m, bad).failure.detail == (
        "reduced_costs.x1: stated 0, but c - A^T y gives -1/500000000000")


def test_sums_over_a_common_denominator():
    # x over its least common denominator L: whole values and L; the checks divide
    # each sum by L once (exact); past twice the longest denominator (many
    # different primes), the values are kept as they are and L = 1
    from exactlp.verifier import _over_common

    got, big = _over_common({"a": F(1, 6), "b": F(-5, 4), "c": F(7)})
    assert big == 12 and got == {"a": F(2), "b": F(-15), "c": F(84)}
    assert all(type(v) is F and v.denominator == 1 for v in got.values())
    assert _over_common({}) == ({}, 1)
    primes = [p for p in range(2, 400) if all(p % q for q in range(2, p))]
    many = {f"x{p}": F(1, p) for p in primes}
    assert _over_common(many) == (many, 1)


def test_a_certificate_with_many_different_denominators_is_checked_term_by_term():
    # a model whose optimum has a different prime in each value's denominator:
    # the common denominator would be the product of them all, so the sums go
    # term by term; the verdicts are the same either way
    primes = [p for p in range(3, 260) if all(p % q for q in range(2, p))]
    lines = ["minimize: " + " + ".join(f"x{p}" for p in primes), "variables:"]
    lines += [f"  x{p}: {{}}" for p in primes] + ["constraints:"]
    lines += [f"  r{p}: {p} x{p} >= 1" for p in primes]
    lines += ["  all: " + " + ".join(f"{p} x{p}" for p in primes) + f" >= {len(primes)}"]
    m, cert = certificate_for("\n".join(lines) + "\n")
    v = verify(m, cert)
    assert v.valid and cert["primal"]["x257"] == "1/257"
    bad = copy.deepcopy(cert)
    bad["primal"]["x257"] = "2/257"
    assert verify(m, bad).failure.detail == "activities.r257: stated 1, but A x gives 2"
    bad = copy.deepcopy(cert)
    bad["duals"]["r257"] = "2/257"
    assert verify(m, bad).failure.detail == "reduced_costs.x257: stated 0, but c - A^T y gives -1"


def test_float_in_a_certificate_is_refused():
    m, cert = certificate_for(KNOWN[0][1])
    v = verify(m, dict(cert, objective=13.0))
    assert v.failure.detail == "objective: expected an exact number as a string, found 13.0"
    text = dump_certificate(cert, "json").replace('"objective": "13"', '"objective": 13.0')
    with pytest.raises(exactlp.InputError) as exc:
        parse_certificate_text(text, "c.json")
    assert "the JSON float 13.0 is not exact" in str(exc.value)


def test_the_written_text_of_a_certificate_is_fixed():
    # the one spelling of each form, byte for byte: keys sorted at every level,
    # two spaces a level, a list's items under their key, every string quoted
    # (YAML would read y as a boolean), non-ASCII written as itself
    from exactlp.certificate import NOTICE, dump_yaml

    m, cert = certificate_for("name: R\u00edo Seco\n" + KNOWN[3][1])
    fp, tool = m.fingerprint, cert["tool"]
    assert dump_certificate(cert) == (
        'farkas:\n  bound_variables:\n    - "x"\n    - "y"\n  bounds:\n    x: "-1"\n    "y": "-1"\n'
        '  constraints:\n    - "need"\n  multipliers:\n    need: "1"\n  rhs: "1"\n'
        'format: "exactlp-certificate/1"\n'
        f'model:\n  fingerprint: "{fp}"\n  name: "R\u00edo Seco"\n'
        f'notice: "{NOTICE}"\nsense: "minimize"\nstatus: "infeasible"\ntool: "{tool}"\n')
    assert dump_certificate(cert, "json") == (
        '{\n  "farkas": {\n    "bound_variables": [\n      "x",\n      "y"\n    ],\n'
        '    "bounds": {\n      "x": "-1",\n      "y": "-1"\n    },\n'
        '    "constraints": [\n      "need"\n    ],\n    "multipliers": {\n      "need": "1"\n    },\n'
        '    "rhs": "1"\n  },\n  "format": "exactlp-certificate/1",\n'
        f'  "model": {{\n    "fingerprint": "{fp}",\n    "name": "R\u00edo Seco"\n  }},\n'
        f'  "notice": "{NOTICE}",\n  "sense": "minimize",\n  "status": "infeasible",\n  "tool": "{tool}"\n}}\n')
    # the emitter's other shapes: a list in a list, empty containers, a bare scalar
    assert dump_yaml([[1], {}, [], {"a": [1]}]) == "-\n  - 1\n- {}\n- []\n-\n  a:\n    - 1\n"
    assert dump_yaml(5) == "5\n" and dump_yaml({}) == "\n"


def test_verify_api_accepts_a_path(tmp_path):
    m, cert = certificate_for(KNOWN[0][1])
    p = tmp_path / "c.yaml"
    p.write_text(dump_certificate(cert))
    v = exactlp.verify(m, str(p))
    assert v.valid and [c.name for c in v.checks] == [
        "model fingerprint", "primal feasibility", "objective", "reduced costs", "dual feasibility", "zero duality gap"]


def test_limit_results_have_no_certificate():
    m = model_from_text(klee_minty(5))
    r = exactlp.solve(m, pricing="dantzig", iteration_limit=3)
    with pytest.raises(ValueError):
        build_certificate(m, r)


# --- the verifier is small and independent ---------------------------------------------------
VERIFIER = Path(exactlp.__file__).parent / "verifier.py"


def test_verifier_imports_nothing_from_the_solver():
    tree = ast.parse(VERIFIER.read_text())
    modules = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            modules.add(("." * node.level) + (node.module or ""))
        elif isinstance(node, ast.Import):
            modules.update(a.name for a in node.names)
    # (math: the least common multiple of the standard library, for the sums over
    # a common denominator; nothing of it computes a number the checks compare)
    assert modules <= {"__future__", "dataclasses", "fractions", "math", ".limits", ".model", ".numbers",
                       ".certificate"}
    assert not any("solver" in x or "gmpy2" in x for x in modules)


def test_verifier_is_small():
    # 300 until the twelfth session; the sums over a common denominator (A x and
    # A^T y, 6-7 times faster on the largest certificates) took it to 314 lines,
    # and the whole products summed as ints (D6CUBE's check 0.79 -> 0.34 s, which
    # a slow spell of the machine had brought near its 1 s target) to 325
    assert len(VERIFIER.read_text().splitlines()) < 330

"""The exactlp YAML model format: reading, strict validation, fingerprint (issue 2)."""

from fractions import Fraction as F
import os

import pytest
from hypothesis import given, settings, strategies as st

import exactlp
from exactlp.errors import InputError
from exactlp.io import dump_yaml_model, model_from_text
from exactlp.model import Constraint, Sense, Variable, build_model

from .helpers import refused

CONTRACT = """\
name: Lower valley drought allocation      # optional text; also `description:`
maximize: 3 north + 2 south + 5/2 east - 1000   # a constant term allowed
variables:                      # every variable used anywhere must be declared here
  north: {lower: 0, upper: 120} # lower defaults to 0, upper to +inf; `lower: -inf` allowed
  south: {upper: 80}
  east: {}                      # [0, +inf)
  transfer: free                # (-inf, +inf)
  reserve: {fixed: 15}          # lower = upper = 15
  "odd name-1": {lower: -inf, upper: 7, unit: ML, note: any name in the structured form}
constraints:                    # name: constraint; order is kept
  canal: north + south <= 150
  total: "north + south + east >= 60"
  balance: north - 2 south == transfer     # variables may stand on both sides
  window: 10 <= east + transfer <= 90      # ranged: number <= expression <= number
  pumps: {terms: {north: 2, "odd name-1": 1/3}, upper: 100}
  fill: {terms: {reserve: 1}, equals: 15}
"""


def test_contract_example_reads_exactly(write):
    m = exactlp.load(write("m.yaml", CONTRACT))
    assert m.name == "Lower valley drought allocation"
    assert m.sense is Sense.MAXIMIZE
    assert m.objective == (("north", F(3)), ("south", F(2)), ("east", F(5, 2)))
    assert m.objective_constant == F(-1000) and type(m.objective_constant) is F
    assert [v.name for v in m.variables] == ["north", "south", "east", "transfer", "reserve", "odd name-1"]
    assert m.variables[0] == Variable("north", F(0), F(120))
    assert m.variables[1] == Variable("south", F(0), F(80))
    assert m.variables[2] == Variable("east", F(0), None)
    assert m.variables[3] == Variable("transfer", None, None)
    assert m.variables[4] == Variable("reserve", F(15), F(15))
    assert m.variables[5] == Variable("odd name-1", None, F(7), "ML", "any name in the structured form")
    assert [c.name for c in m.constraints] == ["canal", "total", "balance", "window", "pumps", "fill"]
    assert m.constraints[0] == Constraint("canal", (("north", F(1)), ("south", F(1))), None, F(150))
    assert m.constraints[1] == Constraint("total", (("north", F(1)), ("south", F(1)), ("east", F(1))), F(60), None)
    assert m.constraints[2] == Constraint("balance", (("north", F(1)), ("south", F(-2)), ("transfer", F(-1))), F(0), F(0))
    assert m.constraints[3] == Constraint("window", (("east", F(1)), ("transfer", F(1))), F(10), F(90))
    assert m.constraints[4] == Constraint("pumps", (("north", F(2)), ("odd name-1", F(1, 3))), None, F(100))
    assert m.constraints[5] == Constraint("fill", (("reserve", F(1)),), F(15), F(15))
    for c in m.constraints:
        assert all(type(a) is F for _, a in c.terms)


def test_decimal_is_exact_through_yaml(write):
    m = exactlp.load(write("m.yaml", "minimize: 0.1 x\nvariables:\n  x: {lower: 0.1, upper: 1e3}\n"))
    assert m.objective == (("x", F(1, 10)),)
    assert m.variables[0].lower == F(1, 10) and type(m.variables[0].lower) is F
    assert m.variables[0].upper == F(1000)


def test_quoted_numbers_are_numbers(write):
    m = exactlp.load(write("m.yaml", 'minimize: x\nvariables:\n  x: {lower: "3/4", upper: \'2.5\'}\n'))
    assert (m.variables[0].lower, m.variables[0].upper) == (F(3, 4), F(5, 2))


def test_feasibility_model_and_no_constraints(write):
    m = exactlp.load(write("m.yaml", "minimize: 0\nvariables:\n  x: {upper: 3}\n"))
    assert m.objective == () and m.constraints == ()


def test_lower_above_upper_is_not_a_load_error(write):
    m = exactlp.load(write("m.yaml", "minimize: x\nvariables:\n  x: {lower: 5, upper: 3}\n"))
    assert (m.variables[0].lower, m.variables[0].upper) == (F(5), F(3))
    assert exactlp.solve(m).status.value == "infeasible"


# --- every error kind, through the CLI: one line, file:line:col: field: message, exit 2 ---------
ERRORS = [
    ("maximize: x\nvariables:\n  x: {uper: 4}\n",
     "3:7: variables.x.uper: unknown key 'uper' (did you mean 'upper'?)"),
    ("maximise: x\nvariables:\n  x: {}\n",
     "1:1: maximise: unknown key 'maximise' (did you mean 'maximize'?)"),
    # words whose nearest spelling would mislead get their own hint
    ("objective: {minimize: x}\nvariables:\n  x: {}\n",
     "1:1: objective: unknown key 'objective' (write the objective as 'minimize: <formula>' or "
     "'maximize: <formula>'; 'objectives' is for priority tiers)"),
    ("Goal: x\nvariables:\n  x: {}\n",
     "1:1: Goal: unknown key 'Goal' (write the objective as 'minimize: <formula>' or 'maximize: <formula>')"),
    ("max: x\nvariables:\n  x: {}\n",
     "1:1: max: unknown key 'max' (did you mean 'maximize'?)"),
    ("maximize: x\nvariables:\n  x: {}\nbounds:\n  x: {upper: 3}\n",
     "4:1: bounds: unknown key 'bounds' (bounds go with each variable, as in 'x: {lower: 0, upper: 10}')"),
    ("maximize: x\nvariables:\n  x: {}\nsubject_to:\n  c: x <= 3\n",
     "4:1: subject_to: unknown key 'subject_to' (did you mean 'constraints'?)"),
    ("maximize: x\nvariables:\n  x: {lb: 0, max: 3}\n",
     "3:7: variables.x.lb: unknown key 'lb' (did you mean 'lower'?)"),
    ("maximize: x\nvariables:\n  x: {up: 3}\n",
     "3:7: variables.x.up: unknown key 'up' (did you mean 'upper'?)"),
    ("maximize: x\nvariables:\n  x: {}\nconstraints:\n  c: {terms: {x: 1}, rhs: 3}\n",
     "5:22: constraints.c.rhs: unknown key 'rhs' (give the limit as 'lower', 'upper' or 'equals')"),
    ("maximize: north\nvariables:\n  north: {}\n  south: {}\nconstraints:\n  c: north + sooth <= 4\n",
     "6:14: constraints.c: undeclared variable 'sooth' (did you mean 'south'?)"),
    ("maximize: 2 nort\nvariables:\n  north: {}\n",
     "1:13: maximize: undeclared variable 'nort' (did you mean 'north'?)"),
    ("maximize: x\nvariables:\n  x: {}\nconstraints:\n  c: {terms: {y: 1}, upper: 3}\n",
     "5:15: constraints.c.terms.y: undeclared variable 'y'"),
    ("maximize: x\nvariables:\n  x: {}\n  x: {upper: 3}\n",
     "4:3: variables.x: key 'x' is given twice (first on line 3)"),
    ("maximize: x\nminimize: x\nvariables:\n  x: {}\n",
     "2:1: minimize: give exactly one of maximize: or minimize:, not both"),
    ("variables:\n  x: {}\n",
     "1:1: (document): missing the objective: give maximize: or minimize:"),
    ("maximize: x\nvariables:\n  x: {}\nconstraints:\n  c: x + * 3 <= 4\n",
     "5:10: constraints.c: expected a number or a variable name, found '*'"),
    ("maximize: x\nvariables:\n  x: {}\n  y: {}\nconstraints:\n  c: 0 <= x <= y\n",
     "6:16: constraints.c: in a chained comparison the outer parts must be numbers (write 'number <= expression <= number')"),
    ("maximize: x\nvariables:\n  x: {}\nconstraints:\n  c: {terms: {x: nan}, upper: 3}\n",
     "5:18: constraints.c.terms.x: 'nan' is not a number"),
    ("maximize: x\nvariables:\n  x: {}\nconstraints:\n  c: {terms: {x: inf}, upper: 3}\n",
     "5:18: constraints.c.terms.x: 'inf' is not allowed here: infinity is only allowed as a bound"),
    ("maximize: x\nvariables:\n  x: {}\nconstraints:\n  c: 1/0 x <= 3\n",
     "5:6: constraints.c: '1/0' divides by zero"),
    ("maximize: x\nvariables:\n  x: {}\nconstraints:\n  c: x <= inf\n",
     "5:11: constraints.c: 'inf' cannot stand in a formula: leave out the side with no limit"),
    ("maximize: x\nvariables:\n  x: {upper: .inf}\n",
     "3:14: variables.x.upper: '.inf' is not a number (did you mean 'inf'?)"),
    ("maximize: x\nvariables:\n  x: {lower: -.inf}\n",
     "3:14: variables.x.lower: '-.inf' is not a number (did you mean '-inf'?)"),
    ("maximize: x\nvariables:\n  x: {upper: ~}\n",
     "3:14: variables.x.upper: '~' is not a number (leave the key out for no bound)"),
    ("maximize: x\nvariables:\n  x:\n    upper:\n",
     "4:11: variables.x.upper: '' is not a number (leave the key out for no bound)"),
    ("maximize: x\nvariables:\n  x: {upper: 1e999}\n",
     "3:14: variables.x.upper: '1e999' has exponent 999, beyond the limit of ±400"),
    ("- a\n- b\n",
     "1:1: (document): a model file must be a mapping of keys (name, maximize/minimize, variables, constraints), found a list"),
    ("maximize: x\nvariables:\n  x: !!python/object:os.system {}\n",
     "3:6: YAML tags (tag:yaml.org,2002:python/object:os.system) are not allowed in exactlp files"),
    ("maximize: x\nvariables:\n  x: &b {upper: 3}\n  y: *b\n",
     "3:6: anchors (&b) are not allowed in exactlp files"),
    ("maximize: x\nvariables:\n  x: {}\n  y: *b\n",
     "4:6: anchors and aliases (*name) are not allowed in exactlp files"),
    ("maximize: x\nvariables: " + "[" * 100 + "]" * 100 + "\n",
     "2:43: nesting is deeper than the limit of 32"),
    ("maximize: x\nvariables: {x: {upper: 3}\n",
     "3:1: invalid YAML: did not find expected ',' or '}'"),
    ("maximize: x\nvariables:\n  x: {lower: inf}\n",
     "3:14: variables.x.lower: a lower bound cannot be +inf"),
    ("maximize: x\nvariables:\n  x: fre\n",
     "3:6: variables.x: expected bounds such as {lower: 0, upper: 10}, {} or 'free', found 'fre' (did you mean 'free'?)"),
    ("maximize: x\nvariables:\n  x: {fixed: 3, lower: 1}\n",
     "3:17: variables.x.lower: give either fixed: or lower:, not both"),
    ("maximize: 0\n",
     "1:1: (document): missing key 'variables' (every variable must be declared)"),
    ("maximize: x\nvariables:\n  x: {}\nconstraints:\n  c: x < 3\n",
     "5:8: constraints.c: strict comparison '<' is not allowed in a linear program; use '<='"),
    ('maximize: x\nvariables:\n  x: {}\nconstraints:\n  c: "x + yy <= 3"\n',
     "5:11: constraints.c: undeclared variable 'yy'"),
    ("maximize: x\nvariables:\n  x: {}\nconstraints:\n  c: {terms: {x: 1}}\n",
     "5:6: constraints.c: give lower:, upper: or equals:"),
    ("maximize: [x]\nvariables:\n  x: {}\n",
     "1:11: maximize: expected an expression such as '3 x + 2 y', found a list"),
    ("maximize: x\nvariables:\n  x: {}\n---\nmaximize: y\n",
     "4:1: the file holds more than one YAML document"),
]


@pytest.mark.parametrize("text, tail", ERRORS, ids=[t for _, t in ERRORS])
def test_model_errors_through_cli(cli, write, text, tail):
    path = write("bad.yaml", text)
    code, out, err = cli("check", path)
    assert code == 2
    assert out == ""
    assert err == f"exactlp: {path}:{tail}\n"
    assert "Traceback" not in err


def test_both_yaml_parsers_give_the_same_tree_and_errors(monkeypatch):
    # the reader takes PyYAML's events from its C parser when built with one,
    # else from the pure-Python parser: every bundled case and every document of
    # the error table above gives the same tree (lines and columns included) or
    # the same error through both
    import pathlib

    import yaml

    from exactlp.io import yamltree

    texts = [p.read_text(encoding="utf-8") for p in sorted(pathlib.Path(__file__).parent.parent.joinpath("cases").glob("*.yaml"))]
    texts += [t for t, _ in ERRORS] + [CONTRACT]
    assert len(texts) > len(ERRORS) + 5

    def read_all():
        out = []
        for text in texts:
            try:
                out.append(yamltree.parse_yaml(text, "m.yaml"))
            except InputError as e:
                # (the wording of a syntax error is the parser's own and differs
                # between the two: "did not find expected ..." against "expected
                # ..., but got ..."; its place does not)
                message = "invalid YAML" if e.message.startswith("invalid YAML: ") else e.message
                out.append(("error", type(e).__name__, message, e.line, e.column, e.field))
        return out

    with_c = read_all()
    monkeypatch.setattr(yamltree, "_Loader", yaml.SafeLoader)
    assert read_all() == with_c
    # (the errors of the reader itself: a key twice, a tag, an anchor, an alias,
    # the depth, a syntax error, two documents)
    assert sum(type(t) is tuple for t in with_c) == 7


@pytest.mark.parametrize(
    "content, tail",
    [
        (b"", ": the file is empty"),
        (b"# only a comment\n\n", ": the file is empty"),
        (b"maximize: x\nvariables:\n  x: {upper: \xff3}\n", ":3:14: bytes that are not UTF-8 text (byte 0xff)"),
    ],
)
def test_file_level_errors(cli, write, content, tail):
    path = write("bad.yaml", content)
    code, out, err = cli("check", path)
    assert (code, out) == (2, "")
    assert err == f"exactlp: {path}{tail}\n"


def test_missing_file(cli, tmp_path):
    code, _, err = cli("check", tmp_path / "nope.yaml")
    assert code == 2 and err == f"exactlp: {tmp_path / 'nope.yaml'}: no such file\n"


def test_file_size_limit(write):
    from exactlp.io import load_yaml_model
    from exactlp.limits import Limits

    path = write("big.yaml", "minimize: 0\nvariables: {}\n" + "#" * 200 + "\n")
    with pytest.raises(InputError) as exc:
        load_yaml_model(path, Limits(max_file_bytes=100))
    assert str(exc.value) == f"{path}: file is larger than the limit of 100 bytes"


def test_file_size_limit_allows_what_is_at_it(write):
    # the limit is on the bytes read (after decompression for .gz): a file of
    # exactly the limit is read whole, one byte more is refused, not cut short
    import gzip

    from exactlp.io import load_yaml_model
    from exactlp.limits import Limits

    text = "minimize: 0\nvariables: {}\n"
    text += "#" * (100 - len(text) - 1) + "\n"
    assert len(text.encode()) == 100
    for name, data in (("at.yaml", text.encode()), ("at.yaml.gz", gzip.compress(text.encode()))):
        assert load_yaml_model(write(name, data), Limits(max_file_bytes=100)).variables == ()
    for name, data in (("past.yaml", text.encode() + b"\n"), ("past.yaml.gz", gzip.compress(text.encode() + b"\n"))):
        path = write(name, data)
        assert refused(load_yaml_model, path, Limits(max_file_bytes=100)) == (
            f"{path}: file is larger than the limit of 100 bytes")


@pytest.mark.parametrize("text, message", [
    # a tag on a number would make the YAML loader's float of it: refused, as any tag
    ("maximize: x\nvariables:\n  x: {upper: !!float 0.1}\n",
     "<text>:3:14: YAML tags (tag:yaml.org,2002:float) are not allowed in exactlp files"),
    ("maximize: x\nvariables:\n  x: {upper: !custom 3}\n",
     "<text>:3:14: YAML tags (!custom) are not allowed in exactlp files"),
    # a key given twice three levels down names its own path
    ("maximize: x\nvariables:\n  x: {lower: 1, lower: 2}\n",
     "<text>:3:17: variables.x.lower: key 'lower' is given twice (first on line 3)"),
    # in a list, the path counts items from 1, as the tiers' own messages do
    ("objectives:\n  - name: a\n    maximize: x\n    extra: {p: 1, p: 2}\nvariables: {x: {}}\n",
     "<text>:4:19: objectives.1.extra.p: key 'p' is given twice (first on line 4)"),
    ("objectives:\n  - name: a\n    maximize: x\n  - name: b\n    maximise: x\nvariables: {x: {}}\n",
     "<text>:5:5: objectives.2.maximise: unknown key 'maximise' (did you mean 'maximize'?)"),
    ("? {a: 1}\n: 2\n", "<text>:1:3: a key must be plain text, not a mapping"),
    ("? [a]\n: 2\n", "<text>:1:3: a key must be plain text, not a list"),
    # a control character stops the YAML reader before any line is parsed
    ("maximize: x\nvariables:\n  x: {upper: \x07}\n",
     "<text>: invalid YAML: unacceptable character #x0007: control characters are not allowed"),
])
def test_yaml_level_errors(text, message):
    assert refused(model_from_text, text) == message


def test_yaml_scalars_that_are_text_not_null():
    # the non-specific tag '!' makes a scalar plain text, which reads as its number;
    # a quoted "null" is the text null, a plain one no value
    m = model_from_text("name: \"null\"\nmaximize: x\nvariables:\n  x: {upper: ! 3}\n")
    assert m.name == "null" and m.variables[0].upper == 3 and type(m.variables[0].upper) is F
    assert model_from_text("name: null\nmaximize: x\nvariables:\n  x: {}\n").name is None


def test_a_byte_that_is_not_utf8_is_placed_by_line_and_column(write):
    from exactlp.io import load_yaml_model

    path = write("bad.yaml", b"\n\xff")
    assert refused(load_yaml_model, path) == f"{path}:2:1: bytes that are not UTF-8 text (byte 0xff)"


WRITER_SHAPES = """\
name: Writer check
description: every shape the writer has
minimize: x - 2 yes - 3/2
variables:
  x: {}
  yes: {lower: 1, upper: 5}
  f: {fixed: 2}
  g: free
  h: {lower: -inf, upper: 3}
constraints:
  eq: x + yes == 4
  rng: 1 <= -x + 3/2 h <= 7
  up: x - g <= 0
  down: g >= -2
  open: {terms: {x: 1}, lower: -inf, upper: inf}
"""


def test_the_model_writer_spells_each_shape_one_way():
    # every kind of bound and row, a key that other YAML readers take for a
    # boolean (quoted), coefficients of 1 and -1 unwritten, a row with no finite
    # side in the structured form; read back, the same model (fingerprint)
    m = model_from_text(WRITER_SHAPES)
    text = dump_yaml_model(m)
    assert text == (
        'name: "Writer check"\ndescription: "every shape the writer has"\nminimize: "x - 2 yes - 3/2"\n'
        'variables:\n  x: {}\n  "yes": {lower: "1", upper: "5"}\n  f: {fixed: "2"}\n  g: free\n'
        '  h: {lower: -inf, upper: "3"}\n'
        'constraints:\n  eq: "x + yes == 4"\n  rng: "1 <= -x + 3/2 h <= 7"\n  up: "x - g <= 0"\n'
        '  down: "g >= -2"\n  open:\n    terms: {x: "1"}\n    lower: -inf\n    upper: inf\n')
    assert model_from_text(text).fingerprint == m.fingerprint
    for source, written in (("name: e\nminimize: 0\nvariables: {}\n", 'name: "e"\nminimize: "0"\nvariables: {}\n'),
                            ("minimize: -5\nvariables: {}\n", 'minimize: "-5"\nvariables: {}\n'),
                            ("maximize: 5 - x\nvariables: {x: {upper: 1}}\n",
                             'maximize: "-x + 5"\nvariables:\n  x: {upper: "1"}\n')):
        assert dump_yaml_model(model_from_text(source)) == written


def test_null_and_the_text_null_in_a_models_name_and_description():
    m = model_from_text("name: null\ndescription: ~\nmaximize: x\nvariables: {x: {upper: 1}}\n")
    assert (m.name, m.description) == (None, None)
    m = model_from_text('name: "null"\ndescription: "~"\nmaximize: x\nvariables: {x: {upper: 1}}\n')
    assert (m.name, m.description) == ("null", "~")


def test_model_size_limits_allow_what_is_at_them():
    from exactlp.limits import Limits

    text = "maximize: x\nvariables: {x: {upper: 1}, y: {}}\nconstraints:\n  a: x + y <= 3\n  b: x - y >= 0\n"
    assert len(model_from_text(text, limits=Limits(max_variables=2, max_constraints=2, max_nonzeros=4)).variables) == 2
    assert refused(model_from_text, text, limits=Limits(max_nonzeros=3)) == (
        "<text>:5:6: constraints.b: more than the limit of 3 nonzeros")
    assert refused(model_from_text, text, limits=Limits(max_variables=1)) == (
        "<text>:2:12: variables: 2 variables, more than the limit of 1")
    assert refused(model_from_text, text, limits=Limits(max_constraints=1)) == (
        "<text>:4:3: constraints: 2 constraints, more than the limit of 1")


@pytest.mark.parametrize("spec, message", [
    ("[x <= 1]", "4:6: constraints.c: expected a formula such as 'x + y <= 10' or a mapping with terms:"),
    ("", "4:5: constraints.c: expected a formula such as 'x + y <= 10' or a mapping with terms:"),
])
def test_a_constraint_that_is_neither_formula_nor_mapping(spec, message):
    assert refused(model_from_text, f"maximize: x\nvariables: {{x: {{}}}}\nconstraints:\n  c: {spec}\n") == (
        "<text>:" + message)


@pytest.mark.parametrize("objectives", ["[]", "3"])
def test_tiers_must_be_a_list_of_at_least_one(objectives):
    assert refused(model_from_text, f"objectives: {objectives}\nvariables: {{x: {{}}}}\n") == (
        "<text>:1:13: objectives: expected a list of tiers such as '- {name: senior, maximize: x}'")


def test_alias_bomb_is_refused_quickly(write):
    lines = ["a0: &a0 [x, x, x, x, x, x, x, x, x]"]
    for i in range(1, 10):
        lines.append(f"a{i}: &a{i} [" + ", ".join([f"*a{i-1}"] * 9) + "]")
    path = write("bomb.yaml", "\n".join(lines) + "\n")
    with pytest.raises(InputError) as exc:
        exactlp.load(path)
    assert exc.value.message == "anchors (&a0) are not allowed in exactlp files"


def test_bad_input_leaves_no_output_files(cli, write, tmp_path):
    path = write("bad.yaml", "maximize: x\nvariables:\n  x: {uper: 4}\n")
    code, _, _ = cli("solve", path, "-c", tmp_path / "out.cert.yaml", "-l", tmp_path / "out.log")
    assert code == 2
    assert sorted(os.listdir(tmp_path)) == ["bad.yaml"]


# --- canonical form and fingerprint -----------------------------------------------------------
A = "maximize: 3 x + 2 y\nvariables:\n  x: {upper: 4}\n  y: {}\nconstraints:\n  c1: x + y <= 5\n  c2: 0.5 x - y >= -2\n"
A_RESPELLED = """\
# the same model, written differently
maximize: "2 y + 3*x"
variables: {x: {lower: 0, upper: "4"}, y: {lower: 0.0}}
constraints:
  c1: {terms: {y: 1, x: 1}, upper: 5.0}
  c2: "1/2 x - 1 y + 2 >= 0"
"""


def test_fingerprint_ignores_spelling():
    a, b = model_from_text(A), model_from_text(A_RESPELLED)
    assert a.fingerprint == b.fingerprint
    assert a.fingerprint.startswith("sha256:") and len(a.fingerprint) == 7 + 64


@pytest.mark.parametrize(
    "changed",
    [
        A.replace("c1:", "cap:"),               # a name
        A.replace("x + y <= 5", "x + y <= 6"),  # a bound
        A.replace("3 x", "3.001 x"),            # a coefficient
        A.replace("maximize", "minimize"),      # the sense
        A.replace("{upper: 4}", "{upper: 4, lower: -1}"),
    ],
)
def test_fingerprint_follows_meaning(changed):
    assert model_from_text(changed).fingerprint != model_from_text(A).fingerprint


def test_fingerprint_ignores_descriptive_text():
    b = "name: something\ndescription: words\n" + A.replace("x: {upper: 4}", "x: {upper: 4, unit: ML, note: n}")
    assert model_from_text(b).fingerprint == model_from_text(A).fingerprint


# --- models built in code --------------------------------------------------------------------
def test_build_model_in_code_matches_the_file():
    m = build_model(
        sense="maximize",
        objective={"x": 3, "y": F(2)},
        variables={"x": (0, 4), "y": None},
        constraints={"c1": ({"x": 1, "y": 1}, None, 5), "c2": ({"x": "0.5", "y": -1}, -2, None)},
    )
    assert m.fingerprint == model_from_text(A).fingerprint


def test_build_model_reads_infinite_bounds_on_their_own_side_only():
    m = build_model(variables={"a": ("-inf", " +Infinity "), "b": {"lower": "-infinity"}, "c": {"upper": 2}})
    assert [(v.lower, v.upper) for v in m.variables] == [(None, None), (None, None), (0, 2)]
    for variables, message in (({"a": ("inf", 3)}, "variables.a: lower bound 'inf' is infinite on the wrong side"),
                               ({"a": {"upper": "-inf"}}, "variables.a: upper bound '-inf' is infinite on the wrong side")):
        assert refused(build_model, variables=variables).endswith(message)


def test_what_a_model_is_compared_by():
    # the mathematics, not where it came from or how it was written
    import dataclasses

    from exactlp.model import Constraint

    m = model_from_text(A)
    for field, value in (("source", "elsewhere.yaml"), ("auxiliary", ("x",)), ("written", (("c1", "x"),)),
                         ("written_objective", "3 x + 2 y")):
        assert dataclasses.replace(m, **{field: value}) == m
    assert [Constraint("r", (), lo, hi).is_equality for lo, hi in ((None, None), (F(1), F(1)), (F(1), F(2)))] == [
        False, True, False]


def test_the_model_parts_defaults_and_immutability():
    import dataclasses

    from exactlp.model import Constraint, Stage, Model, stage_model

    v, st, bare = Variable("x"), Stage("s", Sense.MINIMIZE, ()), Model(Sense.MINIMIZE, (), ())
    assert (v.lower, v.upper, st.constant, bare.objective_constant, bare.constraints) == (0, None, 0, 0, ())
    assert all(type(x) is F for x in (v.lower, st.constant, bare.objective_constant))
    for part in (v, Constraint("r", ()), st, bare):
        with pytest.raises(dataclasses.FrozenInstanceError):
            part.name = "other" if hasattr(part, "name") else None
    # an earlier tier's constant is taken off its held value: p + 5 held at 6 is p == 1
    m = model_from_text("objectives:\n  - name: one\n    maximize: p + 5\n  - name: two\n    minimize: q\n"
                        "variables: {p: {upper: 1}, q: {}}\n")
    held = stage_model(m, 1, [F(6)]).constraints[-1]
    assert (held.name, held.terms, held.lower, held.upper) == ("one.held", (("p", F(1)),), 1, 1)


def test_the_canonical_form_and_its_fingerprint_are_fixed():
    # A certificate names its model by this fingerprint, so the canonical form may
    # not change within a format version: the name, units and notes are left out,
    # exact numbers are text, names are escaped to ASCII, keys are sorted.  Anyone
    # can recompute it: the SHA-256 of the canonical text.
    import hashlib

    m = model_from_text("name: R\u00edo\nmaximize: {terms: {\u00e9: 3, b: 1/2}, constant: -1}\n"
                        "variables: {\u00e9: {upper: 4, unit: ML}, b: free}\n"
                        "constraints:\n  cap: {terms: {\u00e9: 1, b: 1}, upper: 5}\n  eq: b == 1\n")
    tiers = model_from_text("objectives:\n  - name: one\n    maximize: p\n  - name: two\n    minimize: q + 1\n"
                            "variables: {p: {upper: 1}, q: {}}\n")
    for model, canonical, fingerprint in (
        (m, '{"constraints":[["cap",[["\\u00e9","1"],["b","1"]],null,"5"],["eq",[["b","1"]],"1","1"]],'
            '"format":"exactlp-model/1","objective":{"constant":"-1","terms":[["\\u00e9","3"],["b","1/2"]]},'
            '"sense":"maximize","variables":[["\\u00e9","0","4"],["b",null,null]]}',
         "sha256:bb3e9cdc8ec57c77bc618c76f5e95f640f592cab5e62b070e6b5c1cb4bcb87d9"),
        (tiers, '{"constraints":[],"format":"exactlp-model/1","objective":{"constant":"1","terms":[["q","1"]]},'
                '"sense":"minimize","stages":[["one","maximize",[["p","1"]],"0"],["two","minimize",[["q","1"]],"1"]],'
                '"variables":[["p","0","1"],["q","0",null]]}',
         "sha256:1e9c9d1245aab35dd9edfe76f737c80a41c12927f851319c2df24e3bbe5e093e"),
    ):
        assert model.canonical() == canonical
        assert model.fingerprint == fingerprint == "sha256:" + hashlib.sha256(canonical.encode("ascii")).hexdigest()


def test_build_model_refuses_floats():
    with pytest.raises(InputError) as exc:
        build_model(objective={"x": 0.1}, variables={"x": None})
    assert exc.value.message == (
        "objective.x: the float 0.1 is not exact; pass it as text ('0.1') or as a Fraction "
        "to say exactly which number is meant"
    )


@pytest.mark.parametrize("call", [exactlp.solve, exactlp.solve_stages, lambda m: exactlp.verify(m, {})])
def test_the_api_wants_a_model_and_says_how_to_get_one(call):
    from pathlib import Path

    for given_path in ("cases/drought.yaml", Path("cases/drought.yaml")):
        with pytest.raises(InputError) as exc:
            call(given_path)
        assert str(exc.value) == ("model: got the path 'cases/drought.yaml', not a Model: "
                                  "load it first, exactlp.load('cases/drought.yaml')")
    with pytest.raises(InputError) as exc:
        call({"x": 1})
    assert str(exc.value) == "model: must be a Model (from exactlp.load or exactlp.build_model), not dict"


def test_model_is_immutable():
    import dataclasses

    m = model_from_text(A)
    with pytest.raises(dataclasses.FrozenInstanceError):
        m.name = "x"  # type: ignore[misc]


def test_variable_lookup_by_name():
    # by a map kept on the model after the first lookup (a report check looks up
    # every ranged variable); a model made from it by replace() has its own
    import dataclasses

    from exactlp.errors import ModelError

    m = model_from_text(A)
    assert [m.variable(v.name) for v in m.variables] == list(m.variables)
    assert all(m.variable(v.name) is v for v in m.variables)
    with pytest.raises(ModelError) as exc:
        m.variable("z")
    assert str(exc.value) == "no variable 'z'"
    with pytest.raises(ModelError) as exc:
        m.variable("xx")
    assert str(exc.value) == "no variable 'xx' (did you mean 'x'?)"
    renamed = dataclasses.replace(m, variables=tuple(dataclasses.replace(v, name=v.name + "2") for v in m.variables))
    assert renamed.variable("x2").upper == F(4)
    with pytest.raises(ModelError):
        renamed.variable("x")
    assert m == model_from_text(A)  # (the kept map is not part of the model's value)


# --- round trips -----------------------------------------------------------------------------
def test_contract_round_trip(write):
    m = exactlp.load(write("m.yaml", CONTRACT))
    again = model_from_text(dump_yaml_model(m))
    assert again.fingerprint == m.fingerprint
    assert again == m


names = st.one_of(
    st.from_regex(r"[A-Za-z_][A-Za-z0-9_.]{0,6}", fullmatch=True),
    st.text(alphabet="ab -:#'\"é{}[]*&!1", min_size=1, max_size=6),
)
nums = st.fractions(min_value=-10**6, max_value=10**6, max_denominator=10**4)
bounds = st.one_of(st.none(), nums)


@st.composite
def models(draw):
    vnames = draw(st.lists(names, min_size=1, max_size=5, unique=True))
    variables = {}
    for n in vnames:
        lo, hi = draw(bounds), draw(bounds)
        variables[n] = {"lower": lo, "upper": hi}
    cons = {}
    for cn in draw(st.lists(names, max_size=4, unique=True)):
        terms = draw(st.dictionaries(st.sampled_from(vnames), nums, max_size=4))
        lo, hi = draw(bounds), draw(bounds)
        cons[cn] = (terms, lo, hi)
    return build_model(
        sense=draw(st.sampled_from(["minimize", "maximize"])),
        objective=draw(st.dictionaries(st.sampled_from(vnames), nums, max_size=4)),
        objective_constant=draw(nums),
        variables=variables,
        constraints=cons,
        name=draw(st.one_of(st.none(), st.text(max_size=10))) or None,
    )


@settings(max_examples=150, deadline=None)
@given(models())
def test_any_model_round_trips_through_yaml(m):
    again = model_from_text(dump_yaml_model(m))
    assert again.fingerprint == m.fingerprint
    assert again.variables == m.variables and again.constraints == m.constraints


@settings(max_examples=300, deadline=None)
@given(st.text(max_size=200))
def test_any_text_gives_a_model_or_our_error(text):
    try:
        model_from_text(text)
    except InputError as e:
        assert "\n" not in str(e)


def test_file_over_the_size_limit_through_cli(cli, tmp_path):
    path = tmp_path / "huge.yaml"
    with open(path, "wb") as fh:  # a sparse file just over the 64 MiB limit
        fh.truncate(64 * 1024 * 1024 + 1)
    code, out, err = cli("check", path)
    assert (code, out) == (2, "")
    assert err == f"exactlp: {path}: file is larger than the limit of 67108864 bytes\n"

"""MPS import (issue 2): conventions on small files, and the whole Netlib set."""

from fractions import Fraction as F
import gzip

import pytest

import exactlp
from exactlp.errors import InputError
from exactlp.io import dump_yaml_model, model_from_text, mps_from_text, read_mps
from exactlp.model import Sense

from .conftest import NETLIB, needs_netlib, netlib_table

SMALL = """\
* a comment line
NAME          TINY
ROWS
 N  COST
 L  LIM1
 G  LIM2
 E  MYEQN
 E  EQNEG
 N  SPARE
COLUMNS
    X1        COST         1.0   LIM1         1.0
    X1        LIM2         1.0   SPARE        7
    X2        COST         2.0   LIM1         1.0
    X2        MYEQN       -1.0
    X3        COST        -1.0   MYEQN        1.0
    X3        EQNEG        1
    X4        COST         0.1   LIM2         2
RHS
    RHS       COST        -4.5
    RHS       LIM1         4.0   LIM2         1.0
    RHS       MYEQN        7.0   EQNEG        3
RANGES
    RNG       LIM1         2.5   LIM2         1.5
    RNG       MYEQN        2     EQNEG       -2
BOUNDS
 UP BND       X1           4.0
 MI BND       X2
 UP BND       X2           1.0
 FR BND       X3
 UP BND       X4          -2
ENDATA
"""


def test_small_free_mps_conventions():
    m = mps_from_text(SMALL)
    assert m.name == "TINY" and m.sense is Sense.MINIMIZE
    assert [v.name for v in m.variables] == ["X1", "X2", "X3", "X4"]
    assert m.objective == (("X1", F(1)), ("X2", F(2)), ("X3", F(-1)), ("X4", F(1, 10)))
    assert m.objective_constant == F(9, 2)  # RHS on the objective row gives -value
    rows = {c.name: c for c in m.constraints}
    assert list(rows) == ["LIM1", "LIM2", "MYEQN", "EQNEG"]  # the extra N row is dropped
    assert (rows["LIM1"].lower, rows["LIM1"].upper) == (F(3, 2), F(4))     # L: [rhs-|R|, rhs]
    assert (rows["LIM2"].lower, rows["LIM2"].upper) == (F(1), F(5, 2))     # G: [rhs, rhs+|R|]
    assert (rows["MYEQN"].lower, rows["MYEQN"].upper) == (F(7), F(9))     # E, R>0: [rhs, rhs+R]
    assert (rows["EQNEG"].lower, rows["EQNEG"].upper) == (F(1), F(3))     # E, R<0: [rhs+R, rhs]
    v = {x.name: x for x in m.variables}
    assert (v["X1"].lower, v["X1"].upper) == (F(0), F(4))
    assert (v["X2"].lower, v["X2"].upper) == (None, F(1))   # MI keeps the upper bound
    assert (v["X3"].lower, v["X3"].upper) == (None, None)
    assert (v["X4"].lower, v["X4"].upper) == (None, F(-2))  # negative UP, no LO: lower -inf
    assert all(type(a) is F for c in m.constraints for _, a in c.terms)



def _fixed(*fields: str) -> str:
    """One fixed-format line: fields at columns 2-3, 5-12, 15-22, 25-36, 40-47, 50-61."""
    starts = (1, 4, 14, 24, 39, 49)
    line = ""
    for start, text in zip(starts, fields):
        line = line.ljust(start) + text
    return line


FIXED = "\n".join([
    "NAME          FIXEDFMT",
    "OBJSENSE",
    "    MAX",
    "ROWS",
    _fixed("N", "profit"),
    _fixed("L", "cap one"),
    "COLUMNS",
    _fixed("", "x one", "profit", "3", "cap one", "1"),
    _fixed("", "y two", "profit", "2", "cap one", "1"),
    "RHS",
    _fixed("", "rhs", "cap one", "10"),
    "BOUNDS",
    _fixed("UP", "bnd", "x one", "4"),
    "ENDATA",
]) + "\n"


def test_fixed_mps_with_blanks_in_names_and_objsense():
    m = mps_from_text(FIXED)
    assert m.sense is Sense.MAXIMIZE
    assert [v.name for v in m.variables] == ["x one", "y two"]
    assert m.constraints[0].name == "cap one"
    r = exactlp.solve(m)
    assert r.objective == F(24)  # x one = 4, y two = 6


@pytest.mark.parametrize(
    "text, message",
    [
        (SMALL.replace("    X4        COST", "    MARKER                 'MARKER'                 'INTORG'\n    X4        COST"),
         "<text>:17:1: COLUMNS: integer markers are not supported: exactlp solves linear programs (remove the integer markers to solve the relaxation)"),
        (SMALL.replace(" UP BND       X1", " BV BND       X1"),
         "<text>:26:1: BOUNDS: bound type BV makes an integer or semi-continuous variable, which exactlp does not support (it solves linear programs)"),
        (SMALL.replace("RHS       LIM1         4.0", "RHS       LIM1         4.x"),
         "<text>:20:28: RHS: '4.x' is not a number"),
        (SMALL.replace("    X2        MYEQN", "    X2        NOROW"),
         "<text>:14:1: COLUMNS: column 'X2' names row 'NOROW', which ROWS does not declare"),
        (SMALL.replace("ENDATA\n", ""), "<text>: MPS: the file ends without ENDATA (truncated?)"),
        (SMALL.replace(" L  LIM1", " Q  LIM1"), "<text>:5:1: ROWS: unknown row type 'Q' (expected N, L, G or E)"),
    ],
)
def test_mps_errors(text, message):
    with pytest.raises(InputError) as exc:
        mps_from_text(text)
    assert str(exc.value) == message


# An entry given twice: readers differ (some add, some keep the last), so such a
# file does not say one model. Each row: the line of SMALL changed, what it
# becomes, and the error.
GIVEN_TWICE = [
    ("    X2        MYEQN       -1.0", "    X2        MYEQN       -1.0   LIM1         3", "14:1: COLUMNS: column 'X2' gives row 'LIM1' a second value"),
    ("    X4        COST         0.1", "    X1        COST         0.1", "17:1: COLUMNS: column 'X1' gives the objective row 'COST' a second value"),
    ("    RHS       MYEQN        7.0", "    RHS       LIM1         7.0", "21:1: RHS: RHS gives row 'LIM1' a second value"),
    ("    RHS       LIM1         4.0", "    RHS       COST         4.0", "20:1: RHS: RHS gives the objective row 'COST' a second value"),
    ("    RNG       MYEQN        2 ", "    RNG       LIM1         2 ", "24:1: RANGES: RANGES gives row 'LIM1' a second value"),
]


@pytest.mark.parametrize("line, becomes, message", GIVEN_TWICE)
def test_an_entry_given_twice_is_an_error(line, becomes, message):
    assert SMALL.count(line) == 1
    with pytest.raises(InputError) as exc:
        mps_from_text(SMALL.replace(line, becomes))
    assert str(exc.value) == "<text>:" + message


def test_import_then_load_gives_the_same_fingerprint(cli, write, tmp_path):
    src = write("tiny.mps", SMALL)
    out = tmp_path / "tiny.yaml"
    code, stdout, err = cli("import", src, "-o", out)
    assert code == 0, err
    direct = exactlp.load(src)
    assert stdout.startswith(f"wrote {out}: 4 variables, 4 constraints, {direct.fingerprint}")
    assert exactlp.load(out).fingerprint == direct.fingerprint


def test_import_refuses_to_overwrite_its_source(cli, write):
    src = write("tiny.mps", SMALL)
    code, _, err = cli("import", src, "-o", src)
    assert code == 2
    assert err == f"exactlp: {src}: refusing to write over the input file {src}\n"


def test_gz_is_read(write, tmp_path):
    p = tmp_path / "tiny.mps.gz"
    with gzip.open(p, "wt") as fh:
        fh.write(SMALL)
    assert exactlp.load(p).fingerprint == mps_from_text(SMALL).fingerprint


# --- the Netlib LP set (source: Netlib lp/data and its readme, via ../shared/netlib) -----------
# BOEING1: the file holds 351 constraint rows plus its objective row; the readme's row
# count of 351 for it does not include the objective (observed in the file itself).
ROWS_WITHOUT_OBJECTIVE = {"BOEING1"}


@needs_netlib
@pytest.mark.parametrize("name", sorted(netlib_table()))
def test_every_netlib_file_loads_with_published_sizes(name):
    row = netlib_table()[name]
    m = read_mps(NETLIB / row["file"])
    expected_rows = int(row["rows"]) - (0 if name in ROWS_WITHOUT_OBJECTIVE else 1)
    assert len(m.constraints) == expected_rows
    assert len(m.variables) == int(row["columns"])


@needs_netlib
@pytest.mark.parametrize("name", ["afiro", "kb2", "boeing2", "recipe", "scagr7", "e226", "bore3d"])
def test_netlib_mps_yaml_round_trip(name):
    m = read_mps(NETLIB / f"{name}.mps.gz")
    again = model_from_text(dump_yaml_model(m))
    assert again.fingerprint == m.fingerprint


@needs_netlib
def test_e226_objective_constant_reading():
    # optimal-values.csv note: the RHS entry on E226's objective row is -7.113,
    # so under the usual reading the objective carries a constant of +7.113.
    m = read_mps(NETLIB / "e226.mps.gz")
    assert m.objective_constant == F(7113, 1000)

"""MPS import (issue 2): conventions on small files, and the whole Netlib set."""

import dataclasses
from fractions import Fraction as F
import gzip

import pytest

import exactlp
from exactlp.errors import InputError
from exactlp.io import dump_yaml_model, model_from_text, mps_from_text, read_mps
from exactlp.model import Sense

from .conftest import NETLIB, needs_netlib, netlib_table
from .helpers import refused

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
        # either word alone (a marker line cut short) is still a marker, not a column
        (SMALL.replace("    X4        COST", "    M1        'INTEND'\n    X4        COST"),
         "<text>:17:1: COLUMNS: integer markers are not supported: exactlp solves linear programs (remove the integer markers to solve the relaxation)"),
        (SMALL.replace("    X4        COST", "    M1        'MARKER'\n    X4        COST"),
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


def _sides(m):
    return {c.name: (c.lower, c.upper) for c in m.constraints}


def _bounds(m):
    return {v.name: (v.lower, v.upper) for v in m.variables}


# The edges of the conventions, each a change to SMALL and what it reads as (by
# hand from the conventions tested above; common practice for the format, which
# has no one published standard).
@pytest.mark.parametrize("change, expect", [
    # OBJSENSE: its word on the same line, on the next line indented or not
    (("NAME          TINY", "NAME          TINY\nOBJSENSE MAX"), lambda m: m.sense is Sense.MAXIMIZE),
    (("NAME          TINY", "NAME          TINY\nOBJSENSE\nMAX"), lambda m: m.sense is Sense.MAXIMIZE),
    (("NAME          TINY", "NAME          TINY\nOBJSENSE\n    MAXIMIZE"), lambda m: m.sense is Sense.MAXIMIZE),
    (("NAME          TINY", "NAME          TINY\nOBJSENSE MIN"), lambda m: m.sense is Sense.MINIMIZE),
    (("NAME          TINY", "NAME          TINY\nOBJSENSE\n    MINIMIZE"), lambda m: m.sense is Sense.MINIMIZE),
    # an equality row's range of less than 1 either way: [7, 7 + 1/2] and [3 - 1/2, 3]
    (("    RNG       MYEQN        2     EQNEG       -2", "    RNG       MYEQN        0.5   EQNEG       -0.5"),
     lambda m: (_sides(m)["MYEQN"], _sides(m)["EQNEG"]) == ((F(7), F(15, 2)), (F(5, 2), F(3)))),
    # a second RHS set and a second RANGES set are not read (the first set named is the one)
    (("RANGES", "    RHS2      LIM1         9\nRANGES"), lambda m: _sides(m)["LIM1"] == (F(3, 2), F(4))),
    (("BOUNDS\n", "    RNG2      LIM1         9\nBOUNDS\n"), lambda m: _sides(m)["LIM1"] == (F(3, 2), F(4))),
    # lines without a set name: RHS 'row value', bounds 'UP col value' and 'FR col'
    (("    RHS       COST        -4.5\n    RHS       LIM1         4.0   LIM2         1.0\n"
      "    RHS       MYEQN        7.0   EQNEG        3", "    COST -4.5\n    LIM1 4.0 LIM2 1.0\n    MYEQN 7.0 EQNEG 3"),
     lambda m: m.objective_constant == F(9, 2) and _sides(m) == _sides(mps_from_text(SMALL))),
    ((" UP BND       X1           4.0\n MI BND       X2\n UP BND       X2           1.0\n FR BND       X3",
      " UP X1 4.0\n MI X2\n UP X2 1.0\n FR X3"),
     lambda m: [_bounds(m)[n] for n in ("X1", "X2", "X3")] == [(F(0), F(4)), (None, F(1)), (None, None)]),
    # UP 0 keeps the lower bound 0 (only a negative UP without LO drops it); a
    # negative UP after LO keeps LO; PL takes the upper bound away; a value after
    # PL is ignored by convention
    ((" UP BND       X4          -2", " UP BND       X4           0"), lambda m: _bounds(m)["X4"] == (F(0), F(0))),
    ((" UP BND       X4          -2", " LO BND       X4          -5\n UP BND       X4          -2"),
     lambda m: _bounds(m)["X4"] == (F(-5), F(-2))),
    ((" UP BND       X4          -2", " UP BND       X4           3\n PL BND       X4           7"),
     lambda m: _bounds(m)["X4"] == (F(0), None)),
    # a row the RHS section does not name has the right-hand side 0
    (("    RHS       MYEQN        7.0   EQNEG        3", "    RHS       MYEQN        7.0"),
     lambda m: _sides(m)["EQNEG"] == (F(-2), F(0))),
])
def test_mps_conventions_at_their_edges(change, expect):
    old, new = change
    assert SMALL.count(old) == 1
    assert expect(mps_from_text(SMALL.replace(old, new)))


def test_mps_size_limits_allow_what_is_at_them():
    # SMALL: 4 rows (SPARE, a second N row, is dropped), 4 columns, 7 nonzeros
    # (LIM1 2, LIM2 2, MYEQN 2, EQNEG 1; SPARE's entry is not kept)
    from exactlp.limits import DEFAULT_LIMITS

    at = dataclasses.replace(DEFAULT_LIMITS, max_constraints=4, max_variables=4, max_nonzeros=7)
    assert mps_from_text(SMALL, limits=at).nonzeros == 7
    for field, line, what in (("max_constraints", 8, "3 rows"), ("max_variables", 17, "3 columns"),
                              ("max_nonzeros", 17, "6 nonzeros")):
        said = refused(mps_from_text, SMALL, limits=dataclasses.replace(at, **{field: 3 if field != "max_nonzeros" else 6}))
        assert said == f"<text>:{line}:1: {'ROWS' if field == 'max_constraints' else 'COLUMNS'}: more than the limit of {what}"


@pytest.mark.parametrize("text, message", [
    (SMALL.replace(" N  SPARE", " N  COST"), "<text>:9:1: ROWS: row 'COST' is declared twice"),
    (SMALL.replace(" N  SPARE", " N  SPARE\n L  SPARE"), "<text>:10:1: ROWS: row 'SPARE' is declared twice"),
    (SMALL.replace("    RNG       LIM1", "    RNG       COST"),
     "<text>:23:1: RANGES: RANGES cannot apply to the free row 'COST'"),
    (SMALL.replace("    RNG       LIM1", "    RNG       SPARE"),
     "<text>:23:1: RANGES: RANGES cannot apply to the free row 'SPARE'"),
    (SMALL.replace(" UP BND       X1", " XX BND       X1"), "<text>:26:1: BOUNDS: unknown bound type 'XX'"),
    (SMALL.replace("NAME          TINY", "NAME          TINY\n  stray"),
     "<text>:3:1: NAME: unexpected data in the NAME section"),
    (SMALL.replace("ROWS", "FOO\nROWS", 1), "<text>:3:1: MPS: unknown section 'FOO'"),
    (SMALL.replace("NAME          TINY", "NAME          TINY\nOBJSENSE\n    UP"),
     "<text>:4:1: OBJSENSE: OBJSENSE must be MIN or MAX, not 'UP'"),
    ("* only a comment\n", "<text>: no MPS sections found: is this an MPS file?"),
    ("NAME          EMPTY\n", "<text>: no MPS sections found: is this an MPS file?"),
    (FIXED.replace(_fixed("", "y two", "profit", "2", "cap one", "1"), _fixed("", "y two", "profit", "", "cap one", "1")),
     "<text>:9:1: COLUMNS: '' is not a number"),
    # a sense word at the start of a line belongs to OBJSENSE only
    (SMALL.replace("COLUMNS", "MAX\nCOLUMNS"), "<text>:10:1: MPS: unknown section 'MAX'"),
])
def test_mps_errors_at_the_edges(text, message):
    assert refused(mps_from_text, text) == message


def test_a_file_of_rows_alone_is_a_model_with_no_variables():
    m = mps_from_text("NAME          BARE\nROWS\n N  COST\n L  CAP\nRHS\n    RHS       CAP          5\nENDATA\n")
    assert (m.variables, [(c.name, c.terms, c.lower, c.upper) for c in m.constraints]) == ((), [("CAP", (), None, F(5))])


def test_a_fixed_format_file_is_read_as_fixed_from_disk(tmp_path):
    # names with blanks make the free reading fail its field counts; the file
    # reader then reads by columns, as mps_from_text does
    path = tmp_path / "fixed.mps"
    path.write_text(FIXED)
    m = read_mps(path)
    assert [v.name for v in m.variables] == ["x one", "y two"] and m.constraints[0].name == "cap one"


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

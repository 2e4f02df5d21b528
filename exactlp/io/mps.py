"""Reading models in MPS, the trade's standard exchange format.

Free and fixed MPS are read (``.gz`` too).  Names are split on blanks
(free MPS); when a file's lines do not split into the expected number of
fields, the file is read again by the fixed-format columns (fields at
columns 2-3, 5-12, 15-22, 25-36, 40-47, 50-61), which allows blanks inside
names.

Sections: NAME, OBJSENSE (MIN/MAX, optional), ROWS, COLUMNS, RHS, RANGES,
BOUNDS, ENDATA.  Conventions, as commonly used (common practice; stated
here so that a reviewer knows exactly how a file was read):

* the first N row is the objective; further N rows are dropped;
* an RHS entry on the objective row gives the objective constant ``-value``;
* RANGES ``R`` on row type L gives ``[rhs - |R|, rhs]``, on G ``[rhs, rhs + |R|]``,
  on E ``[rhs, rhs + R]`` when ``R > 0`` and ``[rhs + R, rhs]`` when ``R < 0``;
* BOUNDS UP, LO, FX, FR, MI, PL.  ``MI`` sets the lower bound to -inf and
  keeps the upper; an ``UP`` with a negative value on a column whose lower
  bound was not set makes the lower bound -inf (and a zero ``UP`` keeps 0);
* only the first RHS, RANGES and BOUNDS set named in the file is used;
* integer markers and BV/LI/UI/SC bounds are refused: exactlp solves linear
  programs, not integer programs.

Every number is read exactly from its decimal text.
"""

from __future__ import annotations

import os
from fractions import Fraction

from ..errors import InputError, LimitError, ModelError, NumberError
from ..limits import DEFAULT_LIMITS, Limits
from ..model import Constraint, Model, Sense, Variable
from ..numbers import parse_number
from .yamltree import read_text

SECTIONS = ("NAME", "OBJSENSE", "OBJSENSE MAX", "ROWS", "COLUMNS", "RHS", "RANGES", "BOUNDS", "ENDATA")
_FIXED_FIELDS = ((1, 3), (4, 12), (14, 22), (24, 36), (39, 47), (49, 61))


class _FieldCount(Exception):
    pass


def _fixed_split(line: str) -> list[str]:
    out = []
    for a, b in _FIXED_FIELDS:
        piece = line[a:b].strip()
        if piece:
            out.append(piece)
        elif line[b:].strip() and (a, b) != _FIXED_FIELDS[0]:
            out.append("")
    while out and out[-1] == "":
        out.pop()
    return out


def read_mps(path: str | os.PathLike, limits: Limits = DEFAULT_LIMITS) -> Model:
    p = os.fspath(path)
    text = read_text(p, limits)
    try:
        return _parse(text, p, limits, fixed=False)
    except _FieldCount:
        return _parse(text, p, limits, fixed=True)


def mps_from_text(text: str, path: str = "<text>", limits: Limits = DEFAULT_LIMITS) -> Model:
    try:
        return _parse(text, path, limits, fixed=False)
    except _FieldCount:
        return _parse(text, path, limits, fixed=True)


def _parse(text: str, path: str, limits: Limits, fixed: bool) -> Model:
    name: str | None = None
    sense = Sense.MINIMIZE
    section: str | None = None
    obj_row: str | None = None
    dropped: set[str] = set()
    row_type: dict[str, str] = {}
    row_order: list[str] = []
    col_order: list[str] = []
    col_index: dict[str, int] = {}
    entries: dict[str, dict[str, Fraction]] = {}  # row -> col -> value
    objective: dict[str, Fraction] = {}
    rhs: dict[str, Fraction] = {}
    ranges: dict[str, Fraction] = {}
    lower: dict[str, Fraction | None] = {}
    upper: dict[str, Fraction | None] = {}
    lower_set: set[str] = set()
    constant = Fraction(0)
    obj_rhs_seen = False
    rhs_set = range_set = bound_set = None
    nonzeros = 0
    ended = False

    def err(msg: str, lineno: int, column: int = 1, field: str | None = None, exc=ModelError):
        return exc(msg, file=path, line=lineno, column=column, field=field or (section or "MPS"))

    def num(tok: str, lineno: int, line: str) -> Fraction:
        try:
            return parse_number(tok, limits)
        except NumberError as e:
            col = line.find(tok) + 1 if tok else 1
            raise err(e.message, lineno, col, exc=NumberError) from None

    for lineno, raw in enumerate(text.splitlines(), 1):
        line = raw.rstrip()
        if not line.strip() or line.lstrip().startswith("*"):
            continue
        if ended:
            raise err("text after ENDATA", lineno)
        if not line[0].isspace():
            head = line.split()
            word = head[0].upper()
            if word == "NAME":
                section = "NAME"
                name = line[4:].strip() or None
                continue
            if word == "OBJSENSE":
                section = "OBJSENSE"
                if len(head) > 1:
                    sense = _sense(head[1], lineno, err)
                continue
            if word in ("ROWS", "COLUMNS", "RHS", "RANGES", "BOUNDS"):
                section = word
                continue
            if word == "ENDATA":
                ended = True
                continue
            if section == "OBJSENSE" and word in ("MAX", "MIN", "MAXIMIZE", "MINIMIZE"):
                sense = _sense(word, lineno, err)
                continue
            raise err(f"unknown section '{head[0]}'", lineno, field="MPS")
        fields = _fixed_split(line) if fixed else line.split()
        if section == "OBJSENSE":
            sense = _sense(fields[0], lineno, err)
        elif section == "ROWS":
            if len(fields) != 2:
                raise _FieldCount if not fixed else err("a ROWS line needs a type and a name", lineno)
            t, r = fields[0].upper(), fields[1]
            if t not in ("N", "L", "G", "E"):
                raise err(f"unknown row type '{fields[0]}' (expected N, L, G or E)", lineno)
            if r in row_type or r == obj_row or r in dropped:
                raise err(f"row '{r}' is declared twice", lineno)
            if t == "N":
                if obj_row is None:
                    obj_row = r
                else:
                    dropped.add(r)
                continue
            row_type[r] = t
            row_order.append(r)
            entries[r] = {}
            if len(row_order) > limits.max_constraints:
                raise err(f"more than the limit of {limits.max_constraints} rows", lineno, exc=LimitError)
        elif section == "COLUMNS":
            if "'MARKER'" in fields or any(f.upper() in ("'INTORG'", "'INTEND'") for f in fields):
                raise err(
                    "integer markers are not supported: exactlp solves linear programs "
                    "(remove the integer markers to solve the relaxation)",
                    lineno,
                )
            if len(fields) not in (3, 5):
                if fixed:
                    raise err("a COLUMNS line needs a column name and one or two row/value pairs", lineno)
                raise _FieldCount
            c = fields[0]
            if c not in col_index:
                col_index[c] = len(col_order)
                col_order.append(c)
                if len(col_order) > limits.max_variables:
                    raise err(f"more than the limit of {limits.max_variables} columns", lineno, exc=LimitError)
            for k in range(1, len(fields), 2):
                r, v = fields[k], num(fields[k + 1], lineno, line)
                # an entry given twice is an error, not summed or overwritten: the
                # file would not say one model (readers differ on such files)
                if r == obj_row:
                    if c in objective:
                        raise err(f"column '{c}' gives the objective row '{r}' a second value", lineno)
                    objective[c] = v
                elif r in dropped:
                    continue
                elif r in entries:
                    row = entries[r]
                    if c in row:
                        raise err(f"column '{c}' gives row '{r}' a second value", lineno)
                    nonzeros += 1
                    if nonzeros > limits.max_nonzeros:
                        raise err(f"more than the limit of {limits.max_nonzeros} nonzeros", lineno, exc=LimitError)
                    row[c] = v
                else:
                    raise err(f"column '{c}' names row '{r}', which ROWS does not declare", lineno)
        elif section in ("RHS", "RANGES"):
            if len(fields) in (2, 4):
                setname, pairs = None, fields
            elif len(fields) in (3, 5):
                setname, pairs = fields[0], fields[1:]
            else:
                if fixed:
                    raise err(f"a {section} line needs row/value pairs", lineno)
                raise _FieldCount
            if section == "RHS":
                if rhs_set is None:
                    rhs_set = setname
                elif setname != rhs_set:
                    continue
            else:
                if range_set is None:
                    range_set = setname
                elif setname != range_set:
                    continue
            for k in range(0, len(pairs), 2):
                r, v = pairs[k], num(pairs[k + 1], lineno, line)
                if section == "RHS":
                    if r == obj_row:
                        if obj_rhs_seen:
                            raise err(f"RHS gives the objective row '{r}' a second value", lineno)
                        obj_rhs_seen = True
                        constant = -v
                    elif r in dropped:
                        continue
                    elif r in row_type:
                        if r in rhs:
                            raise err(f"RHS gives row '{r}' a second value", lineno)
                        rhs[r] = v
                    else:
                        raise err(f"RHS names row '{r}', which ROWS does not declare", lineno)
                else:
                    if r in row_type:
                        if r in ranges:
                            raise err(f"RANGES gives row '{r}' a second value", lineno)
                        ranges[r] = v
                    elif r == obj_row or r in dropped:
                        raise err(f"RANGES cannot apply to the free row '{r}'", lineno)
                    else:
                        raise err(f"RANGES names row '{r}', which ROWS does not declare", lineno)
        elif section == "BOUNDS":
            if not fields:
                continue
            t = fields[0].upper()
            if t in ("BV", "LI", "UI", "SC"):
                raise err(
                    f"bound type {t} makes an integer or semi-continuous variable, which exactlp "
                    f"does not support (it solves linear programs)",
                    lineno,
                )
            if t in ("UP", "LO", "FX"):
                if len(fields) == 4:
                    setname, c, vtext = fields[1], fields[2], fields[3]
                elif len(fields) == 3:
                    setname, c, vtext = None, fields[1], fields[2]
                else:
                    if fixed:
                        raise err(f"a {t} bound needs a column and a value", lineno)
                    raise _FieldCount
            elif t in ("FR", "MI", "PL"):
                if len(fields) == 3:
                    setname, c, vtext = fields[1], fields[2], None
                elif len(fields) == 2:
                    setname, c, vtext = None, fields[1], None
                elif len(fields) == 4:  # a value after FR/MI/PL is ignored by convention
                    setname, c, vtext = fields[1], fields[2], None
                else:
                    if fixed:
                        raise err(f"a {t} bound needs a column", lineno)
                    raise _FieldCount
            else:
                raise err(f"unknown bound type '{fields[0]}'", lineno)
            if bound_set is None:
                bound_set = setname
            elif setname != bound_set:
                continue
            if c not in col_index:
                raise err(f"BOUNDS names column '{c}', which COLUMNS does not declare", lineno)
            if t == "UP":
                v = num(vtext, lineno, line)  # type: ignore[arg-type]
                upper[c] = v
                if v < 0 and c not in lower_set:
                    lower[c] = None
            elif t == "LO":
                lower[c] = num(vtext, lineno, line)  # type: ignore[arg-type]
                lower_set.add(c)
            elif t == "FX":
                v = num(vtext, lineno, line)  # type: ignore[arg-type]
                lower[c] = upper[c] = v
                lower_set.add(c)
            elif t == "FR":
                lower[c] = upper[c] = None
                lower_set.add(c)
            elif t == "MI":
                lower[c] = None
                lower_set.add(c)
            elif t == "PL":
                upper[c] = None
        elif section == "NAME":
            raise err("unexpected data in the NAME section", lineno)
        else:
            raise err("data before the first section (ROWS, COLUMNS, ...)", lineno, field="MPS")
    if obj_row is None and not row_order and not col_order:
        raise InputError("no MPS sections found: is this an MPS file?", file=path)
    if not ended:
        raise InputError("the file ends without ENDATA (truncated?)", file=path, field="MPS")

    variables = tuple(
        Variable(c, lower.get(c, Fraction(0)), upper.get(c)) for c in col_order
    )
    constraints = []
    for r in row_order:
        t = row_type[r]
        b = rhs.get(r, Fraction(0))
        lo: Fraction | None
        hi: Fraction | None
        if t == "L":
            lo, hi = None, b
        elif t == "G":
            lo, hi = b, None
        else:
            lo, hi = b, b
        if r in ranges:
            R = ranges[r]
            if t == "L":
                lo = b - abs(R)
            elif t == "G":
                hi = b + abs(R)
            elif R > 0:
                hi = b + R
            elif R < 0:
                lo = b + R
        row = entries[r]
        terms = tuple(
            (c, row[c]) for c in sorted(row, key=col_index.__getitem__) if row[c] != 0
        )
        constraints.append(Constraint(r, terms, lo, hi))
    obj = tuple((c, objective[c]) for c in sorted(objective, key=col_index.__getitem__) if objective[c] != 0)
    return Model(
        sense=sense,
        objective=obj,
        variables=variables,
        constraints=tuple(constraints),
        objective_constant=constant,
        name=name,
        source=path,
    )


def _sense(word: str, lineno: int, err) -> Sense:
    w = word.upper()
    if w in ("MAX", "MAXIMIZE"):
        return Sense.MAXIMIZE
    if w in ("MIN", "MINIMIZE"):
        return Sense.MINIMIZE
    raise err(f"OBJSENSE must be MIN or MAX, not '{word}'", lineno)
